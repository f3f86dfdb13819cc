"""Command line: ``margincheck check``, ``validate``, ``diff``, ``headroom``, ``schema``, ``capture`` and
``bring-up``.

Exit codes (design.md section 6): 0 every finding pass or marginal; 1 any fail or not-evaluated finding;
2 the input could not be read or validated (one line per problem, ``file:line:col: path: message``).
An unexpected internal error prints one line and exits 3; set MARGINCHECK_DEBUG=1 to see the traceback.
"""

from __future__ import annotations

import argparse
import contextlib
import os
import sys
from dataclasses import replace
from pathlib import Path
from typing import Sequence

from margincheck import __version__
from margincheck.captures.command import add_capture_command
from margincheck.cli_bringup import add_bring_up_command, positive_quantity
from margincheck.errors import InputError
from margincheck.loading import DEFAULT_LIMITS
from margincheck.policy import BUILT_IN_POLICIES, shipped_policy_names
from margincheck.report import FORMATS, sheet_format
from margincheck.safe_text import printable

__all__ = ["main"]

EXIT_INPUT_ERROR = 2
EXIT_INTERNAL_ERROR = 3

#: Policy names --policy accepts besides a file: the default and the policy files shipped with margincheck.
_POLICY_NAMES = (*BUILT_IN_POLICIES, *shipped_policy_names())

_DESCRIPTION = """\
Check that every power switch of a switching cell stays inside its derated
ratings at the worst case: highest bus voltage, largest turn-off current,
fastest gate drive, with the commutation-loop and common-source inductance of
the real layout. Reads one YAML design file (format margincheck/1).
"""

_EPILOG = """\
examples:
  margincheck check examples/solar-string-sic-leg.yaml
  margincheck check leg.yaml --details
  margincheck check leg.yaml --format json > leg-report.json
  margincheck check leg.yaml --policy lab-policy.yaml
  margincheck check leg.yaml --policy mil-dtl-917f-fet
  margincheck check leg.yaml --format json --output reports/leg.json
  # compare with the other package style (Kelvin or shared source):
  margincheck check leg.yaml --what-if-source "1 nH"
  # the SOA chart with every checked point:
  margincheck check leg.yaml --plot leg-soa.svg
  margincheck check leg.yaml --report junit:out/margins.xml
      --report sarif:out/margins.sarif --report html:out/leg-review.html
  # one page for the reviewer to sign:
  margincheck check leg.yaml --report signoff:out/leg-signoff.html
  # every design in a folder, one summary:
  margincheck check designs/ --report markdown:summary.md
  # one field changed for this run:
  margincheck check leg.yaml --set switches.Q2.common_source_inductance="1 nH"
  # what moved between two revisions:
  margincheck diff leg.yaml leg-rev-c.yaml --format markdown
  margincheck validate leg.yaml
  margincheck headroom leg.yaml --format json -o leg-headroom.json
  margincheck schema > design.schema.json
  margincheck capture q1-turn-off.csv --map v_ds=CH1 --map v_ds.attenuation=100
  # voltage steps for a first bench run, from a low-voltage capture:
  margincheck bring-up leg.yaml --format markdown -o bench-plan.md

exit codes:
  0 pass (marginal findings included)
  1 a fail or a not-evaluated finding
  2 the input could not be read or validated

The report is a first-order estimate and ends with safety cautions; it does
not replace measurement or qualified review.
"""


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="margincheck", description=_DESCRIPTION, epilog=_EPILOG,
                                     formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--version", action="version", version=f"margincheck {__version__}")
    commands = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    check = commands.add_parser("check", help="check designs and print the margin report",
                                description="Evaluate every rule at the worst-case corners and print the report. "
                                            "With several files or a folder, check them all in parallel and "
                                            "print one summary.")
    check.add_argument("files", type=Path, nargs="+", metavar="FILE",
                       help="design file (YAML, format margincheck/1); several files or folders for a batch")
    _add_input_arguments(check)
    check.add_argument("--format", choices=tuple(FORMATS), default="text",
                       help="format of the report on stdout: text for a terminal or CI log (default), json for "
                            "tools, or any --report format; in a batch, text or json for the summary")
    check.add_argument("--policy", metavar="NAME|FILE",
                       help="derating policy to use instead of the design's own: a built-in name ("
                            + ", ".join(_POLICY_NAMES) + ") or a policy file (format margincheck-policy/1)")
    check.add_argument("--what-if-source", type=positive_quantity("inductance"), metavar="INDUCTANCE",
                       help='also evaluate every switch with the other source connection (kelvin <-> shared) and '
                            'this common-source inductance, e.g. "8 nH", and show both side by side')
    check.add_argument("--output", "-o", type=Path, metavar="PATH",
                       help="write the report to PATH (atomically; never over an input file) instead of stdout")
    check.add_argument("--report", type=_report_target, action="append", default=[], metavar="FORMAT:PATH",
                       help=f"also write the report as FORMAT ({', '.join(FORMATS)}) to PATH, atomically and never "
                            "over an input file; repeatable. FORMAT signoff writes a one-page sign-off sheet: "
                            "Markdown for PATH.md, HTML for PATH.html. In a batch, junit, sarif and markdown "
                            "combine every design in one file; the other formats need {name} in PATH (one file per "
                            "design)")
    check.add_argument("--details", "-v", action="store_true",
                       help="text report: every finding in full (formula, corner values, intermediate results, "
                            "source, caution), the exact inputs, switching figures and SOA points; by default a "
                            "passing finding takes one line")
    check.add_argument("--no-waivers", action="store_true",
                       help="ignore the design's waivers: every finding counts as computed")
    check.add_argument("--batch", action="store_true",
                       help="summary mode even for one file; files that are not margincheck designs are skipped "
                            "(for hooks that pass every changed YAML file)")
    check.add_argument("--sensitivities", action="store_true",
                       help="rank, for every finding, the inputs that move its margin most (each swung across its "
                            "tolerance with the others at the worst corner); re-evaluates the rules at those points")
    check.add_argument("--monte-carlo", type=_count, metavar="N",
                       help="also draw N production samples of every toleranced input and report each rule's "
                            "probability of violation (Wilson interval) and margin percentiles")
    check.add_argument("--seed", type=int, default=0, metavar="S",
                       help="seed of the Monte Carlo samples (default 0): the same seed gives the same samples")
    check.add_argument("--simulated-samples", type=_count, default=200, metavar="M",
                       help="how many of the Monte Carlo samples the cell simulation runs at (default 200); the "
                            "closed-form rules use all N")
    check.add_argument("--plot", type=Path, action="append", default=[], metavar="PATH.svg|PATH.png",
                       help='also draw the SOA chart of every switch to an SVG or PNG file; repeatable (e.g. both) '
                            '(needs the plot extra: pip install "margincheck[plot]")')

    validate = commands.add_parser("validate", help="only read and validate a design (exit 0 or 2)",
                                   description="Read the design, its device files and its policy, and report "
                                               "every problem; evaluates no rule.")
    validate.add_argument("file", type=Path, metavar="FILE", help="design file (YAML, format margincheck/1)")
    _add_input_arguments(validate)

    diff = commands.add_parser("diff", help="compare the findings of two designs (exit 1 when B adds a fail)",
                               description="Check designs A and B and list what changed, the largest loss of "
                                           "margin first; exit code 1 when B has a fail or not-evaluated "
                                           "finding that A did not have. --set applies to both designs.")
    diff.add_argument("files", type=Path, nargs=2, metavar="FILE", help="design A (before), then design B (after)")
    _add_input_arguments(diff)
    diff.add_argument("--set-b", action="append", default=[], metavar="PATH=VALUE", dest="overrides_b",
                      help="like --set, for design B only (after the --set overrides); e.g. diff leg.yaml "
                           'leg.yaml --set-b switches.Q1.gate_drive.r_off="4.7 ohm" shows what that change does')
    diff.add_argument("--format", choices=("text", "json", "markdown"), default="text",
                      help="text for a terminal or CI log (default), json for tools, markdown for a pull-request "
                           "comment")
    diff.add_argument("--output", "-o", type=Path, metavar="PATH",
                      help="write the comparison to PATH (atomically; never over an input file) instead of stdout")

    _add_headroom_parser(commands)

    schema = commands.add_parser("schema", help="print a JSON Schema, for editors and other tools",
                                 description="Print the JSON Schema (draft 2020-12) of an input format.")
    schema.add_argument("kind", nargs="?", default="design", choices=("design", "device", "policy"),
                        help="which file format (default: design)")
    add_capture_command(commands)
    add_bring_up_command(commands, _add_input_arguments)
    return parser


def _add_headroom_parser(commands) -> None:
    headroom = commands.add_parser(
        "headroom", help="how far each stress may rise and each gate resistor move before a rule fails",
        description="Per switch: the highest bus voltage, turn-off current and loop inductance, and the smallest "
                    "and largest r_on and r_off, at which every rule still passes; names the rule that binds. "
                    "Exit code 1 when the design already fails at its own values.")
    headroom.add_argument("file", type=Path, metavar="FILE", help="design file (YAML, format margincheck/1)")
    _add_input_arguments(headroom)
    headroom.add_argument("--format", choices=("text", "json"), default="text",
                          help="text for a terminal (default) or json (format margincheck-headroom/1)")
    headroom.add_argument("--policy", metavar="NAME|FILE",
                          help="derating policy instead of the design's own: a built-in name ("
                               + ", ".join(_POLICY_NAMES) + ") or a policy file")
    headroom.add_argument("--output", "-o", type=Path, metavar="PATH",
                          help="write the report to PATH (atomically; never over an input file) instead of stdout")


def _byte_count(text: str) -> int:
    value = int(text)
    if value <= 0:
        raise argparse.ArgumentTypeError(f"expected a positive number of bytes, got {text}")
    return value


def _count(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if value <= 0:
        raise argparse.ArgumentTypeError(f"expected a number above zero, got {text}")
    return value


def _report_target(text: str) -> tuple[str, Path]:
    format_name, separator, path = text.partition(":")
    if separator and format_name == "signoff" and path:
        try:
            return sheet_format(path), Path(path)
        except ValueError as error:
            raise argparse.ArgumentTypeError(str(error)) from None
    if not separator or format_name not in FORMATS or not path:
        raise argparse.ArgumentTypeError(f'expected FORMAT:PATH with FORMAT one of {", ".join(FORMATS)} or signoff, '
                                         f'e.g. "sarif:margins.sarif", got "{text}"')
    return format_name, Path(path)


def _add_input_arguments(command: argparse.ArgumentParser) -> None:
    command.add_argument("--allow-root", type=Path, action="append", default=[], metavar="DIR",
                         help="a folder besides the design's own that its device and policy files may be in "
                              "(repeatable); without it, references may not leave the design's folder")
    command.add_argument("--max-input-bytes", type=_byte_count, default=DEFAULT_LIMITS.max_bytes, metavar="N",
                         help=f"largest input file read, in bytes (default {DEFAULT_LIMITS.max_bytes})")
    command.add_argument("--set", action="append", default=[], metavar="PATH=VALUE", dest="overrides",
                         help='change a field of the design for this run, e.g. --set '
                              'switches.Q2.common_source_inductance="1 nH" (list entries by ref or [index]; '
                              'VALUE is YAML; an empty VALUE removes the field); repeatable. The file is not '
                              'changed; the report lists the overrides')


def _input_options(arguments: argparse.Namespace) -> dict:
    from margincheck.overrides import parse_overrides

    limits = replace(DEFAULT_LIMITS, max_bytes=arguments.max_input_bytes)
    return {"limits": limits, "allowed_roots": tuple(arguments.allow_root),
            "overrides": parse_overrides(arguments.overrides, limits)}


def _check(arguments: argparse.Namespace) -> int:
    chart_formats = [_chart_format(path) for path in arguments.plot]
    files = arguments.files
    if arguments.batch or len(files) > 1 or any(path.is_dir() for path in files):
        from margincheck.cli_batch import check_batch

        return check_batch(arguments, _check_options(arguments))
    from margincheck.checking import check_file
    from margincheck.output import write_atomically
    from margincheck.report import renderer

    with _progress_bar(arguments) as progress:
        report = check_file(files[0], **_check_options(arguments), progress=progress)
    read = [Path(item.name) for item in report.design.inputs]
    for format_name, path in arguments.report:
        write_atomically(path, lambda stream, name=format_name: renderer(name, arguments.details)(report, stream),
                         read)
    render = renderer(arguments.format, arguments.details)
    if arguments.output is None:
        render(report, sys.stdout)
    else:
        write_atomically(arguments.output, lambda stream: render(report, stream), read)
    if arguments.plot:  # after the report, so that a chart that cannot be drawn loses nothing else
        from margincheck.plot import render_soa_chart

        for path, chart_format in zip(arguments.plot, chart_formats):
            write_atomically(path, lambda stream, image=chart_format: render_soa_chart(report.soa, stream, image),
                             read, binary=True)
    return report.exit_code


def _check_options(arguments: argparse.Namespace) -> dict:
    from margincheck.montecarlo import MonteCarloSettings

    statistics = None if arguments.monte_carlo is None else MonteCarloSettings(
        arguments.monte_carlo, arguments.seed, arguments.simulated_samples)
    return {**_input_options(arguments), "policy": arguments.policy, "what_if_source": arguments.what_if_source,
            "use_waivers": not arguments.no_waivers, "sensitivities": arguments.sensitivities,
            "statistics": statistics}


@contextlib.contextmanager
def _progress_bar(arguments: argparse.Namespace):
    """A progress bar of the Monte Carlo on a terminal's stderr; nothing under --format json or without a TTY."""
    if arguments.monte_carlo is None or arguments.format == "json" or not sys.stderr.isatty():
        yield None
        return
    from rich.console import Console
    from rich.progress import Progress

    with Progress(console=Console(stderr=True), transient=True) as bar:
        task = bar.add_task("Monte Carlo samples", total=arguments.monte_carlo)
        yield lambda done, total: bar.update(task, completed=done, total=total)


def _chart_format(path: Path | None) -> str | None:
    """The chart's image format, checked before any work is done (and the plot extra with it)."""
    if path is None:
        return None
    from margincheck.plot import chart_format, pyplot_module

    image_format = chart_format(path)
    pyplot_module()
    return image_format


def _validate(arguments: argparse.Namespace) -> int:
    from margincheck.design import load_design
    from margincheck.rules import RULES

    design = load_design(arguments.file, **_input_options(arguments), rule_ids=RULES)
    changed = f" with {len(design.overrides)} --set override(s)" if design.overrides else ""
    print(f"{arguments.file}: valid margincheck/1 design{changed} ({len(design.switches)} switches, "
          f"{len(design.capacitors)} capacitors, policy {design.policy.name})")
    return 0


def _diff(arguments: argparse.Namespace) -> int:
    from margincheck.cli_diff import run_diff

    return run_diff(arguments, _input_options(arguments))


def _headroom(arguments: argparse.Namespace) -> int:
    from margincheck.headroom import headroom_file
    from margincheck.output import write_atomically
    from margincheck.report.headroom_report import render_json, render_text

    headroom = headroom_file(arguments.file, arguments.policy, **_input_options(arguments))
    render = render_json if arguments.format == "json" else render_text
    if arguments.output is None:
        render(headroom, sys.stdout)
    else:
        write_atomically(arguments.output, lambda stream: render(headroom, stream),
                         [Path(item.name) for item in headroom.design.inputs])
    return headroom.exit_code


def _schema(arguments: argparse.Namespace) -> int:
    from margincheck.schema import schema_text

    sys.stdout.write(schema_text(arguments.kind))
    return 0


def _capture(arguments: argparse.Namespace) -> int:
    from margincheck.captures.command import run_capture

    return run_capture(arguments)


def _bring_up(arguments: argparse.Namespace) -> int:
    from margincheck.cli_bringup import run_bring_up

    _chart_format(arguments.plot)
    return run_bring_up(arguments, _input_options(arguments))


def _plot_unavailable() -> type[Exception]:
    from margincheck.plot import PlotUnavailable  # matplotlib itself is imported only when a chart is drawn

    return PlotUnavailable


def _silence_stdout() -> None:
    """Point stdout at the null device, so that the interpreter's last flush does not fail a second time."""
    with contextlib.suppress(OSError, ValueError):
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())


_COMMANDS = {"check": _check, "validate": _validate, "diff": _diff, "headroom": _headroom, "schema": _schema,
             "capture": _capture, "bring-up": _bring_up}


def _replace_unencodable(stream) -> None:
    """Let a stream whose encoding lacks a character of the report (an ASCII-only terminal: ─, ×, µ) write a
    replacement instead of failing the run."""
    with contextlib.suppress(AttributeError, ValueError):
        stream.reconfigure(errors="replace")


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line and return its exit code."""
    arguments = _parser().parse_args(argv)
    if sys.stdout is None and getattr(arguments, "output", None) is None:  # started with stdout closed (>&-)
        print("margincheck: standard output is closed, so the report cannot be shown; give --output PATH",
              file=sys.stderr)
        return EXIT_INPUT_ERROR
    _replace_unencodable(sys.stdout)
    try:
        return _COMMANDS[arguments.command](arguments)
    except BrokenPipeError:  # the reader of stdout went away: the report was not delivered
        _silence_stdout()
        print("margincheck: standard output was closed before the report was written", file=sys.stderr)
        return EXIT_INPUT_ERROR
    except InputError as error:
        for problem in error.problems:
            print(problem, file=sys.stderr)
        return EXIT_INPUT_ERROR
    except OSError as error:  # a report file that could not be written
        print(printable(f"margincheck: {error}"), file=sys.stderr)
        return EXIT_INPUT_ERROR
    except _plot_unavailable() as error:
        print(printable(f"margincheck: {error}"), file=sys.stderr)
        return EXIT_INPUT_ERROR
    except Exception as error:  # the last line of defence: one line, never a traceback
        if os.environ.get("MARGINCHECK_DEBUG"):
            raise
        print(printable(f"margincheck: internal error ({type(error).__name__}: {error}); please report it with "
                        "the design file"), file=sys.stderr)
        return EXIT_INTERNAL_ERROR


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
