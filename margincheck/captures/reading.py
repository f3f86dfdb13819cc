"""Measured double-pulse captures in SI units: ``read_capture(path, mapping) -> Capture``.

Steps, in order, for every signal (``time`` and the channels ``v_ds``, ``i_d``, ``v_gs``, ``v_gs_idle``):

1. integer codes: value = code * scale + offset (the mapping's scale/offset, else the file's);
2. unit: the mapping's unit, else the file's (units row or bracketed header), else SI; converted to SI with
   margincheck.units, and it must be of the signal's kind (a voltage for ``v_ds``);
3. probe attenuation: the value is multiplied by it;
4. every value must be finite;
5. time must increase strictly, except in a peak-detect export, where every time is written on exactly two
   consecutive rows (the lowest and the highest value seen in that interval). Such a pair becomes one sample:
   ``Capture.channels`` holds the upper envelope (the larger of the two rows) and ``Capture.lower`` the lower
   envelope; a maximum is measured on ``channels``, a minimum on ``lower``. For an ordinary capture both
   hold the same arrays;
6. deskew: a channel's time stamps are shifted by its deskew (t + deskew) and the channel is resampled onto
   the file's time base by linear interpolation (numpy.interp); the time base is trimmed to the span every
   shifted channel covers, so that no value is extrapolated.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from margincheck.captures.array_reading import read_npy_capture, read_npz_capture
from margincheck.captures.csv_reading import read_csv_capture
from margincheck.captures.mapping import CHANNELS, TIME, CaptureMapping, check_unit
from margincheck.captures.raw import RawCapture, fail, file_digest
from margincheck.errors import InputError
from margincheck.units import QuantityError

__all__ = ["Capture", "read_capture"]


@dataclass(frozen=True, eq=False)
class Capture:
    """One capture in SI units.

    Attributes
    ----------
    file : str
        The file's name as given.
    sha256 : str
        SHA-256 of the file's bytes.
    time : ndarray
        Sample times [s], strictly increasing, relative to the trigger (negative before it).
    channels : dict of str to ndarray
        Channel name (``v_ds`` [V], ``i_d`` [A], ``v_gs`` [V], ``v_gs_idle`` [V]) -> values on ``time``;
        the upper envelope of a peak-detect export.
    lower : dict of str to ndarray
        The lower envelope of a peak-detect export; the same arrays as ``channels`` otherwise.
    metadata : dict of str to str
        Key/value lines of the file's header (empty for NumPy files).
    peak_detect : bool
        Whether the file was a peak-detect export (pairs of rows per time).

    All arrays are read-only.
    """

    file: str
    sha256: str
    time: np.ndarray
    channels: dict[str, np.ndarray]
    lower: dict[str, np.ndarray]
    metadata: dict[str, str]
    peak_detect: bool = False

    @property
    def samples(self) -> int:
        """Number of samples."""
        return len(self.time)

    @property
    def sample_interval(self) -> float:
        """Mean interval between samples [s]."""
        return float((self.time[-1] - self.time[0]) / (len(self.time) - 1))


def _to_si(raw: RawCapture, mapping: CaptureMapping, signal: str) -> None:
    """Codes, unit and attenuation applied to ``raw.values[signal]`` in place."""
    values = raw.values[signal]
    scale = mapping.scale.get(signal, raw.scale.get(signal))
    offset = mapping.offset.get(signal, raw.offset.get(signal))
    if signal in raw.integer_codes and scale is None:
        raise InputError([raw.locate(signal, None, f"holds integer codes; give {signal}'s scale (and offset) in "
                                                   f"the mapping: value = code * scale + offset")])
    if scale is not None:
        values *= scale
    if offset is not None:
        values += offset
    unit = mapping.units.get(signal, raw.units.get(signal))
    factor = 1.0
    if unit is not None:
        try:
            factor = check_unit(signal, unit)
        except QuantityError as error:
            source = "the mapping's" if signal in mapping.units else "the file's"
            raise InputError([raw.locate(signal, None, f'{source} unit "{unit}" cannot be used for {signal}: '
                                                       f"{error}")]) from None
    factor *= mapping.attenuation.get(signal, 1.0)
    if factor != 1.0:
        values *= factor
    finite = np.isfinite(values)
    if not finite.all():
        row = int(np.argmin(finite))
        raise InputError([raw.locate(signal, row, f"{float(values[row])} is not a finite number (after scale, unit and "
                                                  "attenuation)")])


def _time_problem(raw: RawCapture, time: np.ndarray) -> InputError | None:
    """Why the time column is neither strictly increasing nor a peak-detect pattern, or None if it is."""
    step = np.diff(time)
    if len(time) < 2:
        return InputError([raw.locate(TIME, None, f"{len(time)} sample; a capture needs two or more")])
    if step[0] != 0:
        falling = np.flatnonzero(step <= 0)
        if not len(falling):
            return None
        row = int(falling[0]) + 1
        what = "repeats" if step[row - 1] == 0 else "goes backwards from"
        hint = "" if step[row - 1] < 0 else "; only a peak-detect export repeats times, every time exactly twice"
        return InputError([raw.locate(TIME, row, f"time {what} the previous row's {float(time[row - 1])!r} s{hint}")])
    pair_start = np.arange(len(step)) % 2 == 0
    broken = np.flatnonzero(np.where(pair_start, step != 0, step <= 0))
    if len(broken):
        row = int(broken[0]) + 1
        return InputError([raw.locate(TIME, row, "a peak-detect export (its first two rows share one time) must "
                                                 "give every time on exactly two consecutive rows, and the times "
                                                 f"must increase; this row breaks that ({float(time[row])!r} s)")])
    if len(time) % 2:
        return InputError([raw.locate(TIME, len(time) - 1, "the last row of a peak-detect export has no partner "
                                                           "row with the same time")])
    return None


def _envelopes(values: dict[str, np.ndarray], peak_detect: bool
               ) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    if not peak_detect:
        return values, values
    upper = {signal: np.maximum(column[0::2], column[1::2]) for signal, column in values.items()}
    lower = {signal: np.minimum(column[0::2], column[1::2]) for signal, column in values.items()}
    return upper, lower


def _deskewed(raw: RawCapture, time: np.ndarray, envelopes: tuple[dict, ...], mapping: CaptureMapping
              ) -> tuple[np.ndarray, tuple[dict, ...]]:
    """Each channel moved by its deskew and resampled (linear interpolation) onto the trimmed time base."""
    shifts = {signal: mapping.deskew.get(signal, 0.0) for signal in envelopes[0]}
    if not any(shifts.values()):
        return time, envelopes
    start = time[0] + max(0.0, *shifts.values())
    stop = time[-1] + min(0.0, *shifts.values())
    first, last = np.searchsorted(time, start), np.searchsorted(time, stop, side="right")
    base = time[first:last]
    if len(base) < 2:
        signal = max(shifts, key=lambda name: abs(shifts[name]))
        raise InputError([raw.locate(signal, None, f"a deskew of {float(shifts[signal])!r} s leaves fewer than two "
                                                   f"samples of the {float(time[-1] - time[0])!r} s capture")])

    def moved(signal: str, column: np.ndarray) -> np.ndarray:
        shift = shifts[signal]
        return np.interp(base, time + shift, column) if shift else column[first:last]

    upper = {signal: moved(signal, column) for signal, column in envelopes[0].items()}
    if envelopes[1] is envelopes[0]:
        return base, (upper, upper)
    return base, (upper, {signal: moved(signal, column) for signal, column in envelopes[1].items()})


def _read_raw(path: Path, name: str, mapping: CaptureMapping, line_feeds: int) -> RawCapture:
    suffix = path.suffix.lower()
    if suffix == ".npy":
        return read_npy_capture(path, name, mapping)
    if suffix == ".npz":
        return read_npz_capture(path, name, mapping)
    return read_csv_capture(path, name, mapping, line_feeds)


def _frozen(array: np.ndarray) -> np.ndarray:
    array.flags.writeable = False
    return array


def read_capture(path: Path | str, mapping: CaptureMapping | None = None, name: str | None = None) -> Capture:
    """Read a capture file (text, ``.npy`` or ``.npz``) into SI arrays on a strictly increasing time base.

    Parameters
    ----------
    path : Path or str
        The capture file; it is only ever opened for reading.
    mapping : CaptureMapping, optional
        Columns, units, attenuation, deskew and integer-code scale/offset (see CaptureMapping); by default
        the columns are found by our names (``time,v_ds,i_d,v_gs``) and values without a unit are SI.
    name : str, optional
        The file's name in messages (default: ``path`` as given).

    Returns
    -------
    Capture

    Raises
    ------
    InputError
        One problem naming the file, the line (or sample) and the column of what cannot be read.
    """
    path = Path(path)
    mapping = mapping or CaptureMapping()
    name = name or str(path)
    if not path.is_file():
        raise fail(name, "no such file" if not path.exists() else "not a regular file")
    sha256, line_feeds = file_digest(path, name, count_lines=path.suffix.lower() not in (".npy", ".npz"))
    raw = _read_raw(path, name, mapping, line_feeds)
    unknown = sorted(set(mapping.deskew) - set(raw.values))
    if unknown:
        raise fail(name, f"a deskew is given for {', '.join(unknown)}, which the file does not have")
    for signal in raw.values:
        _to_si(raw, mapping, signal)
    time = raw.values.pop(TIME)
    problem = _time_problem(raw, time)
    if problem is not None:
        raise problem
    peak_detect = bool(time[1] == time[0])
    envelopes = _envelopes(raw.values, peak_detect)
    if peak_detect:
        time = time[0::2].copy()
        if len(time) < 2:
            raise InputError([raw.locate(TIME, 1, "a peak-detect export of one pair of rows is one sample; a "
                                                  "capture needs two or more")])
    time, (upper, lower) = _deskewed(raw, time, envelopes, mapping)
    order = [signal for signal in CHANNELS if signal in upper]
    channels = {signal: _frozen(upper[signal]) for signal in order}
    lower = {signal: _frozen(lower[signal]) for signal in order}
    return Capture(name, sha256, _frozen(time), channels, lower, dict(raw.metadata), peak_detect)
