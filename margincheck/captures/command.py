"""``margincheck capture FILE [--map KEY=VALUE ...] [--format text|json]``: read a capture and summarise it on
one screen (channels, samples, time span, sample interval, ranges, header metadata)."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from margincheck.captures.mapping import KIND_OF
from margincheck.safe_text import printable

__all__ = ["add_capture_command", "capture_summary", "run_capture"]

#: Header metadata shown at most (the JSON summary and the text alike), and the longest value shown.
MAX_METADATA = 30
MAX_METADATA_TEXT = 80
_SI_UNITS = {"voltage": "V", "current": "A"}

_MAP_HELP = ("how the file's columns map to our signals (repeatable): SIGNAL=COLUMN (a header name, or a number "
             "counting from 1) with SIGNAL one of time, v_ds, i_d, v_gs, v_gs_idle; SIGNAL.unit=mV; "
             "SIGNAL.attenuation=10; SIGNAL.deskew=4ns; SIGNAL.scale=0.01 and SIGNAL.offset=-2 for integer codes; "
             "separator=;|,|tab; decimal=.|,")


def add_capture_command(commands: argparse._SubParsersAction) -> None:
    """Register the ``capture`` command on the main parser's subcommands."""
    command = commands.add_parser(
        "capture", help="read a measured double-pulse capture and summarise it",
        description="Read an oscilloscope export (CSV with optional key/value header lines and units row, .npy or "
                    ".npz), convert it to SI units and print a one-screen summary. Exit 2, with the file, line "
                    "and column, when the capture cannot be read.")
    command.add_argument("file", type=Path, metavar="FILE", help="the capture file")
    command.add_argument("--map", action="append", default=[], metavar="KEY=VALUE", help=_MAP_HELP)
    command.add_argument("--format", choices=("text", "json"), default="text",
                         help="text for a terminal (default), json for tools")


def _short(text: str) -> str:
    return text if len(text) <= MAX_METADATA_TEXT else text[:MAX_METADATA_TEXT - 3] + "..."


def capture_summary(capture) -> dict:
    """The summary as plain data in SI units (what ``--format json`` prints)."""
    channels = {}
    for signal, upper in capture.channels.items():
        channels[signal] = {"units": _SI_UNITS[KIND_OF[signal]], "min": float(capture.lower[signal].min()),
                            "max": float(upper.max())}
    metadata = dict(list(capture.metadata.items())[:MAX_METADATA])
    return {"format": "margincheck-capture-summary/1", "file": capture.file, "sha256": capture.sha256,
            "samples": capture.samples, "peak_detect": capture.peak_detect,
            "time": {"units": "s", "start": float(capture.time[0]), "stop": float(capture.time[-1]),
                     "sample_interval": capture.sample_interval},
            "channels": channels,
            "metadata": {_short(key): _short(value) for key, value in metadata.items()},
            "metadata_omitted": max(len(capture.metadata) - MAX_METADATA, 0)}


def _text(summary: dict) -> str:
    from margincheck.units import format_value

    time = summary["time"]
    lines = [f"{summary['file']}: {summary['samples']} samples"
             + (" (peak-detect pairs, as upper and lower envelopes)" if summary["peak_detect"] else ""),
             f"  sha256           {summary['sha256']}",
             f"  time             {format_value(time['start'], 'time')} to {format_value(time['stop'], 'time')}, "
             f"sample interval {format_value(time['sample_interval'], 'time')}"]
    for signal, channel in summary["channels"].items():
        kind = KIND_OF[signal]
        lines.append(f"  {signal:<16} {format_value(channel['min'], kind)} to {format_value(channel['max'], kind)}")
    if summary["metadata"]:
        lines.append("  header metadata:")
        lines.extend(f"    {key}: {value}" for key, value in summary["metadata"].items())
    if summary["metadata_omitted"]:
        lines.append(f"    ... and {summary['metadata_omitted']} more")
    return "\n".join(printable(line) for line in lines)


def run_capture(arguments: argparse.Namespace) -> int:
    """Read the capture named on the command line and print its summary; exit code 0 (errors raise)."""
    from margincheck.captures.mapping import mapping_from_options
    from margincheck.captures.reading import read_capture

    capture = read_capture(arguments.file, mapping_from_options(arguments.map))
    summary = capture_summary(capture)
    if arguments.format == "json":
        sys.stdout.write(json.dumps(summary, indent=2) + "\n")
    else:
        print(_text(summary))
    return 0
