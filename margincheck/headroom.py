"""Headroom: how far each stress may rise, and each gate resistor move, before a rule stops passing.

For every switch: the highest bus voltage, turn-off current and commutation-loop inductance, and the smallest
and largest turn-on and turn-off gate resistances, at which every counted finding still passes (pass or
marginal). A what-if design is the built ``Design`` with one input's interval scaled by a factor (low, nominal
and high alike, so the tolerance keeps its proportions); it starts with an empty memo, and the rules are
evaluated on it lazily, one counted finding at a time, the rule that failed last first.

The search brackets the pass/fail boundary by stepping the factor geometrically (``STEP``) from the design
value, then bisects the bracket to ``RESOLUTION``. It assumes the boundary is crossed once in the searched
range: a window of passing values narrower than one step can be stepped over.

What counts (our choices, stated in every report):

* A finding counts when it is evaluated at the design's own values; a not-evaluated one cannot pass at any
  value, so it is left out and listed as not counted. A counted finding that cannot be evaluated at a searched
  value (a simulated edge that does not finish) stops the search there, as a fail would.
* Waivers do not apply: a waiver accepts one deviation at the design's values, not a margin at others.
* Bus voltage, turn-off current and loop inductance: the switch's own findings (and, for the bus voltage, one
  more row with the bus capacitors' findings). Gate resistors of a switch: its findings and its leg partner's,
  whose idle gate (spurious turn-on, gate levels) and edges read this switch's drive.
"""

from __future__ import annotations

import dataclasses
import datetime
import math
from dataclasses import dataclass
from enum import Enum
from pathlib import Path

from margincheck import __version__
from margincheck.cautions import cautions_for
from margincheck.design import Capacitor, Design, Switch, load_design
from margincheck.errors import format_path
from margincheck.findings import Finding, Status, attention_rank
from margincheck.intervals import Interval
from margincheck.rules import RULES, evaluate_design

__all__ = ["PARAMETERS", "RESOLUTION", "SEARCH_NOTE", "STEP", "Headroom", "Limit", "Outcome", "Row",
           "design_limits", "find_headroom", "headroom_file", "headroom_rows", "scaled_design"]

#: Geometric step of the bracketing search (each step multiplies or divides the factor by it).
STEP = 1.5
#: The bisection stops when the failing factor is within this fraction of the passing one.
RESOLUTION = 0.005
#: A stress that already fails is searched down to this fraction of the design's value.
STRESS_FLOOR = 0.25
#: The loop inductance is searched up to this multiple of the design's (no rating bounds it).
LOOP_REACH = 4.0
#: A gate resistor is searched up to this multiple of the design's value, and down to the larger of
#: ``RESISTOR_FLOOR`` of it and ``SMALLEST_RESISTANCE``.
RESISTOR_REACH = 10.0
RESISTOR_FLOOR = 1.0 / 20.0
SMALLEST_RESISTANCE = 0.1  # ohm
#: A stress without a rating to bound it (a missing v_ds_max or i_d_pulse) is searched up to this multiple.
UNRATED_REACH = 4.0

UP, DOWN = 1, -1
_CAUTION = ("A headroom is where these first-order models stop passing the derating policy, not a rating and not an "
            "operating point: run at the design's values, and raise a stress on the bench only in small steps, "
            "measuring the peak voltage and the gate at each.")
#: How the search works and what it counts, for every report.
SEARCH_NOTE = (
    f"Each input is scaled with its tolerance (low, nominal and high by one factor). From the design's value the "
    f"factor steps by x{STEP} until the state changes, then bisects to {RESOLUTION:.1%}. The search assumes the "
    f"pass/fail boundary is crossed once in the searched range: a narrower window of passing (or failing) values "
    f"can be stepped over. Passing means every counted finding is pass or marginal; a finding not evaluated at the "
    f"design's values is not counted, and one that cannot be evaluated at a searched value stops the search there "
    f"as a fail would. Waivers do not apply. Gate-resistor rows count the switch's findings and its leg partner's. "
    f"The binding rule is the worst counted finding just beyond the limit.")
_PASSING = (Status.PASS, Status.MARGINAL)
_GATE_RESISTORS = ("r_on", "r_off")


@dataclass(frozen=True)
class Parameter:
    """A searched input: its label for a reader, quantity kind and where a design file writes it."""

    label: str
    kind: str
    field: str


#: The searched inputs by name (the nomenclature of design.md section 9).
PARAMETERS = {
    "bus_voltage": Parameter("bus voltage", "voltage", "conditions.bus_voltage"),
    "turn_off_current": Parameter("turn-off current", "current", "conditions.turn_off_current"),
    "loop_inductance": Parameter("loop inductance", "inductance", "commutation_loop.inductance"),
    "r_on": Parameter("r_on", "resistance", "gate_drive.r_on"),
    "r_off": Parameter("r_off", "resistance", "gate_drive.r_off"),
}


class Outcome(str, Enum):
    """What a search found."""

    LIMITED = "limited"
    ALREADY_FAILING = "already failing"
    NOT_LIMITED = "not limited in the searched range"
    FAILS_THROUGHOUT = "fails throughout the searched range"
    NOT_SEARCHED = "not searched"


@dataclass(frozen=True)
class Row:
    """One search: ``parameter`` pushed in ``direction`` (UP: the highest value, DOWN: the smallest), with the
    findings ``counted`` as (rule, subject) pairs. ``subject`` heads the row (a switch ref, or "capacitors");
    ``switch`` is the switch whose gate resistor is scaled (None for a design-level input). ``reach`` is the
    searched range of factors (lowest, highest)."""

    parameter: str
    direction: int
    subject: str
    switch: str | None
    counted: tuple[tuple[str, str], ...]
    not_counted: tuple[Finding, ...]
    reach: tuple[float, float]


@dataclass(frozen=True)
class Limit:
    """The result of one row. ``factor`` is the last passing factor of the design's value (None when nothing
    passes or nothing was searched), ``beyond`` the failing factor next to it (None when not limited);
    ``binding`` is the worst counted finding at ``beyond`` and ``at_limit`` the counted finding closest to
    failing at ``factor``."""

    row: Row
    outcome: Outcome
    design_value: Interval | None
    field: str
    factor: float | None = None
    beyond: float | None = None
    binding: Finding | None = None
    at_limit: Finding | None = None
    reason: str = ""

    @property
    def value(self) -> Interval | None:
        """The design's interval scaled to the limit."""
        return None if self.factor is None else self.scaled(self.factor)

    def scaled(self, factor: float) -> Interval | None:
        """The design's interval scaled by ``factor``."""
        return None if self.design_value is None else self.design_value.scaled(factor)


@dataclass(frozen=True)
class Headroom:
    """Every row's limit, how much work the search took, and the cautions."""

    design: Design
    limits: tuple[Limit, ...]
    points: int
    rule_evaluations: int
    cautions: tuple[str, ...]
    generated_at: datetime.datetime
    tool_version: str = __version__

    @property
    def exit_code(self) -> int:
        """1 when the design already fails at its own values in some row (a review gate), else 0."""
        failing = (Outcome.ALREADY_FAILING, Outcome.FAILS_THROUGHOUT)
        return int(any(limit.outcome in failing for limit in self.limits))


def _switch(design: Design, ref: str | None) -> Switch | None:
    return next((switch for switch in design.switches if switch.ref == ref), None)


def _parameter_interval(design: Design, parameter: str, ref: str | None) -> Interval | None:
    if parameter in _GATE_RESISTORS:
        return getattr(_switch(design, ref).gate_drive, parameter)
    if parameter == "loop_inductance":
        return design.loop_inductance
    return getattr(design.conditions, parameter)


def scaled_design(design: Design, parameter: str, factor: float, switch: str | None = None) -> Design:
    """The what-if design: ``parameter`` (of ``switch``, for a gate resistor) scaled by ``factor``."""
    interval = _parameter_interval(design, parameter, switch).scaled(factor)
    if parameter in _GATE_RESISTORS:
        return dataclasses.replace(design, switches=tuple(
            dataclasses.replace(item, gate_drive=dataclasses.replace(item.gate_drive, **{parameter: interval}))
            if item.ref == switch else item for item in design.switches))
    if parameter == "loop_inductance":
        return dataclasses.replace(design, loop_inductance=interval)
    return dataclasses.replace(design, conditions=dataclasses.replace(design.conditions, **{parameter: interval}))


def _largest_end(interval: Interval | None) -> float:
    ends = [] if interval is None else [end for end in (interval.low, interval.nominal, interval.high)
                                        if math.isfinite(end)]
    return max(ends, default=math.nan)


def _stress_reach(rating: float | None, interval: Interval | None) -> tuple[float, float]:
    """From ``STRESS_FLOOR`` up to the rating itself (the largest end of the design's value at the rating)."""
    top = (rating or math.nan) / _largest_end(interval)
    return STRESS_FLOOR, max(top if math.isfinite(top) and top > 0 else UNRATED_REACH, 1.0)


def _resistor_reach(interval: Interval | None) -> tuple[float, float]:
    ends = [] if interval is None else [end for end in (interval.low, interval.high) if math.isfinite(end)]
    smallest = min(ends, default=math.nan)
    floor = max(RESISTOR_FLOOR, SMALLEST_RESISTANCE / smallest) if smallest > 0 else RESISTOR_FLOOR
    return min(floor, 1.0), RESISTOR_REACH


def _row(parameter: str, direction: int, subject: str, switch: str | None, findings: list[Finding],
         reach: tuple[float, float]) -> Row:
    counted = tuple((item.rule, item.subject) for item in findings if item.status is not Status.NOT_EVALUATED)
    skipped = tuple(item for item in findings if item.status is Status.NOT_EVALUATED)
    return Row(parameter, direction, subject, switch, counted, skipped, reach)


def headroom_rows(design: Design, findings: list[Finding]) -> list[Row]:
    """The searches of a design, from its findings at its own values: per switch, the highest bus voltage,
    turn-off current and loop inductance and the smallest and largest r_on and r_off; then the highest bus
    voltage for the bus capacitors."""
    def of(*refs: str) -> list[Finding]:
        return [item for item in findings if item.subject in refs]

    rows = []
    conditions = design.conditions
    for switch in design.switches:
        own = of(switch.ref)
        partner = design.opposite_of(switch)
        pair = of(switch.ref, *([partner.ref] if partner is not None else []))
        rows += [
            _row("bus_voltage", UP, switch.ref, None, own,
                 _stress_reach(switch.device.v_ds_max, conditions.bus_voltage)),
            _row("turn_off_current", UP, switch.ref, None, own,
                 _stress_reach(switch.device.i_d_pulse, conditions.turn_off_current)),
            _row("loop_inductance", UP, switch.ref, None, own, (STRESS_FLOOR, LOOP_REACH)),
        ]
        rows += [_row(name, direction, switch.ref, switch.ref, pair,
                      _resistor_reach(getattr(switch.gate_drive, name)))
                 for name in _GATE_RESISTORS for direction in (DOWN, UP)]
    if design.capacitors:
        rated = max(capacitor.rated_voltage for capacitor in design.capacitors)
        rows.append(_row("bus_voltage", UP, "capacitors", None, of(*(item.ref for item in design.capacitors)),
                         _stress_reach(rated, conditions.bus_voltage)))
    return rows


class _Search:
    """The what-if designs of one headroom run, shared between rows that scale the same input."""

    def __init__(self, design: Design):
        self.design = design
        self.designs: dict[tuple, Design] = {}

    def _at(self, row: Row, factor: float) -> Design:
        if factor == 1.0:
            return self.design
        key = (row.parameter, row.switch, factor)
        if key not in self.designs:
            self.designs[key] = scaled_design(self.design, row.parameter, factor, row.switch)
        return self.designs[key]

    def _findings(self, row: Row, factor: float, first: tuple[str, str] | None = None):
        """The counted findings at ``factor``, one at a time (``first`` first), each evaluated when asked."""
        design = self._at(row, factor)
        subjects: dict[str, Switch | Capacitor] = {item.ref: item for item in (*design.switches, *design.capacitors)}
        for rule, ref in sorted(row.counted, key=lambda key: key != first):
            finding = RULES[rule].check(subjects[ref], design)
            if finding is not None:  # None: a rule that does not apply, which no searched value changes
                yield finding

    def _blocker(self, row: Row, factor: float, first: Finding | None) -> Finding | None:
        """The first counted finding that does not pass at ``factor`` (None: every one passes)."""
        previous = None if first is None else (first.rule, first.subject)
        return next((item for item in self._findings(row, factor, previous) if item.status not in _PASSING), None)

    def _walk(self, row: Row, end: float, passing: bool, blocker: Finding | None):
        """Step from the design's value toward the factor ``end`` while the pass/fail state stays ``passing``:
        the last factor in that state, the first one out of it (None: ``end`` reached) and the last blocker."""
        current = 1.0
        while current != end:
            step = min(current * STEP, end) if end > 1.0 else max(current / STEP, end)
            found = self._blocker(row, step, blocker)
            blocker = found or blocker
            if (found is None) != passing:
                return current, step, blocker
            current = step
        return current, None, blocker

    def _bisect(self, row: Row, good: float, bad: float, blocker: Finding | None) -> tuple[float, float]:
        while max(good, bad) / min(good, bad) > 1.0 + RESOLUTION:
            middle = math.sqrt(good * bad)
            found = self._blocker(row, middle, blocker)
            if found is None:
                good = middle
            else:
                bad, blocker = middle, found
        return good, bad

    def limit(self, row: Row) -> Limit:
        """The search of one row."""
        interval = _parameter_interval(self.design, row.parameter, row.switch)
        field = PARAMETERS[row.parameter].field
        if row.switch is not None:
            field = f"{format_path(_switch(self.design, row.switch).path)}.{field}"
        reason = _unsearchable(row, interval)
        if reason:
            return Limit(row, Outcome.NOT_SEARCHED, interval, field, reason=reason)
        toward, away = (row.reach[1], row.reach[0]) if row.direction == UP else row.reach
        blocker = self._blocker(row, 1.0, None)
        if blocker is None:
            good, bad, blocker = self._walk(row, toward, True, None)
            if bad is None:
                return Limit(row, Outcome.NOT_LIMITED, interval, field, factor=good, at_limit=self._closest(row, good))
            outcome = Outcome.LIMITED
        else:
            bad, good, blocker = self._walk(row, away, False, blocker)
            if good is None:
                return Limit(row, Outcome.FAILS_THROUGHOUT, interval, field, beyond=bad,
                             binding=self._closest(row, bad))
            outcome = Outcome.ALREADY_FAILING
        good, bad = self._bisect(row, good, bad, blocker)
        return Limit(row, outcome, interval, field, factor=good, beyond=bad, binding=self._closest(row, bad),
                     at_limit=self._closest(row, good))

    def _closest(self, row: Row, factor: float) -> Finding | None:
        """The counted finding nearest to failing (or failing worst) at ``factor``."""
        return min(self._findings(row, factor), key=attention_rank, default=None)

    def rule_evaluations(self) -> int:
        """Rules evaluated on every design the search read, the design's own included."""
        return sum(sum(1 for key in design.memo if key[0] in RULES)
                   for design in (self.design, *self.designs.values()))


def _unsearchable(row: Row, interval: Interval | None) -> str:
    """Why a row cannot be searched, or an empty string."""
    label = PARAMETERS[row.parameter].label
    if interval is None:
        return f"the design gives no {label}"
    if not _largest_end(interval) > 0:
        return f"the design's {label} is zero, which no factor changes"
    if not row.counted:
        return "no finding of these subjects is evaluated at the design's values"
    return ""


def design_limits(headroom: Headroom) -> list[Limit]:
    """Per design-level input (bus voltage, turn-off current, loop inductance), the row that limits the whole
    design: one that fails throughout, else the lowest limit found (also below the design's value)."""
    chosen = []
    for parameter in ("bus_voltage", "turn_off_current", "loop_inductance"):
        rows = [limit for limit in headroom.limits if limit.row.parameter == parameter]
        hopeless = [limit for limit in rows if limit.outcome is Outcome.FAILS_THROUGHOUT]
        found = [limit for limit in rows if limit.outcome in (Outcome.LIMITED, Outcome.ALREADY_FAILING)]
        if hopeless or found:
            chosen.append(hopeless[0] if hopeless else min(found, key=lambda limit: limit.factor))
    return chosen


def find_headroom(design: Design, rows: list[Row] | None = None, now: datetime.datetime | None = None) -> Headroom:
    """The headroom of every row of ``design`` (default: all of :func:`headroom_rows`)."""
    findings = evaluate_design(design)
    search = _Search(design)
    limits = tuple(search.limit(row) for row in (headroom_rows(design, findings) if rows is None else rows))
    return Headroom(design=design, limits=limits, points=1 + len(search.designs),
                    rule_evaluations=search.rule_evaluations(),
                    cautions=(_CAUTION, *cautions_for(design, findings)),
                    generated_at=now or datetime.datetime.now(datetime.timezone.utc))


def headroom_file(path: Path, policy: str | None = None, **options) -> Headroom:
    """The headroom of a design file; ``options`` are passed to :func:`margincheck.design.load_design`.

    Raises
    ------
    margincheck.errors.InputError
        When the design, a device file or the policy cannot be read, validated or built.
    """
    return find_headroom(load_design(path, policy, **options, rule_ids=RULES))
