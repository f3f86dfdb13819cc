"""The typed design: a validated design file (with its device and policy files) in SI floats and intervals.

``load_design`` is the input side in one call: read, validate against the schema, resolve device and policy
files, check what a schema cannot (ordered intervals, known device names, unique refs, signs), and build the
``Design``. Every problem in every file is collected and raised together as one ``InputError``.
"""

from __future__ import annotations

import datetime
import math
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Collection, Sequence

from margincheck.building import NON_NEGATIVE, POSITIVE, Builder, get
from margincheck.captures.design_section import CaptureSpec, build_capture_specs
from margincheck.devices import Device, build_device
from margincheck.errors import InputError, Problem, closest_name_hint, format_path
from margincheck.intervals import Interval
from margincheck.loading import DEFAULT_LIMITS, DocPath, Document, Limits, load_document
from margincheck.overrides import AppliedOverride, Override, apply_overrides, attribute_problems
from margincheck.policy import BUILT_IN_POLICIES, DEFAULT_POLICY, Policy, policy_from_mapping, shipped_policy_file
from margincheck.references import FileReferenceError, resolve_reference
from margincheck.schema import validate
from margincheck.units import parse_quantity

__all__ = ["Capacitor", "Conditions", "Design", "Device", "GateDrive", "InputFile", "OperatingPoint",
           "ShortCircuitCase", "Switch", "Waiver", "load_design"]


@dataclass(frozen=True)
class InputFile:
    """One file the check read, for the report's record: role, name as shown, SHA-256 of its bytes."""

    role: str
    name: str
    sha256: str


@dataclass(frozen=True)
class GateDrive:
    """Gate-drive levels [V] and resistances [ohm] of one switch."""

    on: Interval
    off: Interval
    r_on: Interval | None = None
    r_off: Interval | None = None
    r_driver: Interval | None = None


@dataclass(frozen=True)
class OperatingPoint:
    """A point to check against the SOA: V_DS [V], I_D [A], pulse width [s] (inf: dc), period [s] (inf:
    a single pulse). ``path`` is where it sits in the design file; a point derived from other results (the
    turn-off transient, a short circuit) names the fields its V_DS and I_D come from in ``fields``."""

    name: str
    v_ds: Interval
    i_d: Interval
    pulse: float
    period: float
    path: DocPath
    fields: tuple[str, str] | None = None

    @property
    def field_names(self) -> tuple[str, str]:
        """Where the point's V_DS and I_D are written (or come from)."""
        place = format_path(self.path)
        return self.fields or (f"{place}.v_ds", f"{place}.i_d")


@dataclass(frozen=True)
class ShortCircuitCase:
    """A short circuit the protection must clear: fault current [A] and detection-plus-turn-off time [s]."""

    current: Interval
    response_time: Interval
    path: DocPath


@dataclass(frozen=True)
class Switch:
    """One power switch of the cell. ``path`` is where its entry sits in the design file."""

    ref: str
    device: Device
    gate_drive: GateDrive
    path: DocPath
    source_connection: str | None = None
    common_source_inductance: Interval | None = None
    turn_off_di_dt: Interval | None = None
    gate_loop_inductance: Interval | None = None
    driver_cmti: float | None = None
    driver_isolated: bool = True
    rms_current: Interval | None = None
    switched_current: Interval | None = None
    r_th_cs: Interval | None = None
    soa_points: tuple[OperatingPoint, ...] = ()
    short_circuit: ShortCircuitCase | None = None


@dataclass(frozen=True)
class Capacitor:
    """A bus capacitor: rated voltage [V] and capacitance [F]."""

    ref: str
    rated_voltage: float
    path: DocPath
    capacitance: Interval | None = None


@dataclass(frozen=True)
class Conditions:
    """Operating conditions: bus voltage [V], turn-off current [A], frequency [Hz], case temperature [K],
    altitude above sea level [m] (None: not given)."""

    bus_voltage: Interval
    turn_off_current: Interval | None = None
    switching_frequency: Interval | None = None
    case_temperature: Interval | None = None
    heatsink_temperature: Interval | None = None
    altitude: Interval | None = None


@dataclass(frozen=True)
class Waiver:
    """A deviation accepted on the record: rule id, subject ref, reason, who accepted it, last valid day."""

    rule: str
    subject: str
    reason: str
    accepted_by: str
    expires: datetime.date
    path: DocPath


@dataclass(frozen=True)
class Design:
    """Everything a check needs, in SI units, plus where it came from."""

    file: Path
    title: str
    revision: str
    standard: str | None
    policy: Policy
    conditions: Conditions
    loop_inductance: Interval | None
    loop_resistance: Interval | None
    loop_quality_factor: float | None
    switches: tuple[Switch, ...]
    opposites: dict[str, str]
    capacitors: tuple[Capacitor, ...]
    inputs: tuple[InputFile, ...]
    warnings: tuple[Problem, ...]
    document: Document = field(repr=False, compare=False)
    pairing_inferred: bool = False
    waivers: tuple[Waiver, ...] = ()
    node_capacitance: Interval | None = None
    #: The ``--set`` overrides this run applied to the document (the file itself says otherwise).
    overrides: tuple[AppliedOverride, ...] = ()
    captures: tuple[CaptureSpec, ...] = ()
    #: Results computed once per design and reused by several rules (see ``remembered``); not copied by
    #: ``dataclasses.replace``, so a changed design starts empty.
    memo: dict = field(default_factory=dict, init=False, repr=False, compare=False)

    def remembered(self, key: tuple, compute):
        """``compute()``, evaluated once per design for ``key`` (e.g. a rule id and a switch ref)."""
        if key not in self.memo:
            self.memo[key] = compute()
        return self.memo[key]

    def policy_for(self, switch: Switch) -> Policy:
        """The derating policy as it applies to ``switch``: the policy's factors for its device's technology
        laid over the policy's own."""
        return self.policy.for_technology(switch.device.technology)

    def opposite_of(self, switch: Switch) -> Switch | None:
        """The other switch of ``switch``'s leg, or None when it has no pair."""
        ref = self.opposites.get(switch.ref)
        return next((other for other in self.switches if other.ref == ref), None)


def _load_checked(path: Path, display_name: str, kind: str, limits: Limits) -> Document:
    document = load_document(path, display_name, limits)
    problems = validate(document, kind)
    if problems:
        raise InputError(problems)
    return document


def _existing(path: Path) -> Path:
    """``path`` if it is a regular file; otherwise the reference is reported where the design writes it."""
    try:
        if not path.is_file():
            raise FileReferenceError("no such file" if not path.exists() else "not a regular file")
    except OSError as error:  # e.g. a file name longer than the file system allows
        raise FileReferenceError(f"the file cannot be opened ({error.strerror or error})") from None
    return path


def _resolve_devices(builder: Builder, design: Document, inputs: list[InputFile]) -> dict[str, Device | None]:
    """Every device by name; None for a device file that could not be used (its problems are recorded)."""
    devices: dict[str, Device | None] = {}
    for name, entry in design.data["devices"].items():
        path: DocPath = ("devices", name)
        if isinstance(entry, dict):
            devices[name] = build_device(builder, design, path, name)
            continue
        file_name = str(design.path.parent / entry)
        try:
            real_path = _existing(resolve_reference(design.path.parent, entry, builder.allowed_roots))
        except FileReferenceError as exc:
            builder.fail(design, path, f'device file "{entry}": {exc}')
            devices[name] = None
            continue
        try:
            document = _load_checked(real_path, file_name, "device", builder.limits)
        except InputError as exc:
            builder.problems.append(design.problem(path, f'device file "{entry}" has problems (listed below)'))
            builder.problems.extend(exc.problems)
            devices[name] = None
            continue
        inputs.append(InputFile("device", file_name, document.sha256))
        devices[name] = build_device(builder, document, (), name)
    return devices


def _build_gate_drive(builder: Builder, document: Document, path: DocPath) -> GateDrive:
    raw = get(document.data, path)
    shared_tolerance = raw.get("tolerance")
    for level in ("on", "off"):
        if shared_tolerance is not None and isinstance(raw.get(level), dict):
            builder.fail(document, path + ("tolerance",),
                         f"gate_drive.tolerance applies to plain levels, but {level} is already toleranced",
                         at_key=True)
    tolerance_path = path + ("tolerance",)
    on = builder.interval(document, path + ("on",), "voltage", tolerance_path=tolerance_path)
    off = builder.interval(document, path + ("off",), "voltage", tolerance_path=tolerance_path)
    return GateDrive(
        on=on, off=off,
        r_on=builder.interval(document, path + ("r_on",), "resistance", NON_NEGATIVE),
        r_off=builder.interval(document, path + ("r_off",), "resistance", NON_NEGATIVE),
        r_driver=builder.interval(document, path + ("r_driver",), "resistance", POSITIVE),
    )


def _check_unique_refs(builder: Builder, document: Document) -> None:
    """Refs name one subject each across switches and capacitors (findings, waivers and report locations
    are found by ref)."""
    first_seen: dict[str, DocPath] = {}
    for key in ("switches", "capacitors"):
        for index, entry in enumerate(document.data.get(key, [])):
            ref, path = entry["ref"], (key, index)
            if ref in first_seen:
                first = first_seen[ref]
                builder.fail(document, path + ("ref",), f'ref "{ref}" is used twice (first by {format_path(first)} '
                                                        f"at line {document.location_of(first).line}); refs are "
                                                        "unique per design")
            first_seen.setdefault(ref, path)


def _build_switches(builder: Builder, document: Document, devices: dict[str, Device | None]
                    ) -> tuple[Switch, ...]:
    switches = []
    for index, entry in enumerate(document.data["switches"]):
        path: DocPath = ("switches", index)
        device = devices.get(entry["device"])
        if device is None and entry["device"] in devices:
            continue  # its device file was refused; that problem is already reported
        if device is None:
            hint = closest_name_hint(entry["device"], sorted(document.data["devices"]), "defined")
            builder.fail(document, path + ("device",), f'no device named "{entry["device"]}" under devices{hint}')
            continue
        switches.append(Switch(
            ref=entry["ref"], device=device, path=path,
            gate_drive=_build_gate_drive(builder, document, path + ("gate_drive",)),
            source_connection=entry.get("source_connection"),
            common_source_inductance=builder.interval(document, path + ("common_source_inductance",),
                                                      "inductance", POSITIVE),
            turn_off_di_dt=builder.interval(document, path + ("turn_off_di_dt",), "current_slew_rate", POSITIVE),
            gate_loop_inductance=builder.interval(document, path + ("gate_loop_inductance",), "inductance",
                                                  POSITIVE),
            driver_cmti=None if entry.get("driver_cmti") in (None, "not-isolated")
            else builder.quantity(document, path + ("driver_cmti",), "voltage_slew_rate", POSITIVE),
            driver_isolated=entry.get("driver_cmti") != "not-isolated",
            rms_current=builder.interval(document, path + ("rms_current",), "current", NON_NEGATIVE),
            switched_current=builder.interval(document, path + ("switched_current",), "current", POSITIVE),
            r_th_cs=builder.interval(document, path + ("r_th_cs",), "thermal_resistance", NON_NEGATIVE),
            soa_points=_operating_points(builder, document, path),
            short_circuit=_short_circuit_case(builder, document, path),
        ))
    return tuple(switches)


def _operating_points(builder: Builder, document: Document, switch: DocPath) -> tuple[OperatingPoint, ...]:
    points = []
    for index, entry in enumerate(get(document.data, switch + ("soa_points",)) or []):
        path = switch + ("soa_points", index)
        pulse = math.inf if entry["pulse"] == "dc" else builder.quantity(document, path + ("pulse",), "time",
                                                                         POSITIVE)
        period = builder.quantity(document, path + ("period",), "time", POSITIVE)
        if "duty" in entry and pulse is not None:
            period = pulse / float(entry["duty"])
        if math.isinf(pulse or 0.0) and ("period" in entry or "duty" in entry):
            builder.fail(document, path + ("pulse",), "a dc point has no period or duty")
        elif period is not None and pulse is not None and period < pulse:
            builder.fail(document, path + ("period",), "the period must not be shorter than the pulse")
        points.append(OperatingPoint(
            name=str(entry["name"]), path=path, pulse=pulse, period=math.inf if period is None else period,
            v_ds=builder.interval(document, path + ("v_ds",), "voltage", POSITIVE),
            i_d=builder.interval(document, path + ("i_d",), "current", POSITIVE)))
    return tuple(points)


def _short_circuit_case(builder: Builder, document: Document, switch: DocPath) -> ShortCircuitCase | None:
    path = switch + ("short_circuit",)
    if get(document.data, path) is None:
        return None
    return ShortCircuitCase(builder.interval(document, path + ("current",), "current", POSITIVE),
                            builder.interval(document, path + ("response_time",), "time", POSITIVE), path)


def _pairs(builder: Builder, document: Document) -> tuple[dict[str, str], bool]:
    """Opposite switches by ref, from ``opposite:`` or a shared ``leg:``; two switches alone are one leg."""
    entries = document.data["switches"]
    refs = {entry["ref"] for entry in entries}
    pairs: dict[str, str] = {}
    legs: dict[str, list[str]] = {}
    for index, entry in enumerate(entries):
        if "opposite" in entry:
            if entry["opposite"] not in refs or entry["opposite"] == entry["ref"]:
                builder.fail(document, ("switches", index, "opposite"),
                             f'no other switch with ref "{entry["opposite"]}"')
                continue
            pairs[entry["ref"]] = entry["opposite"]
            pairs.setdefault(entry["opposite"], entry["ref"])
        if "leg" in entry:
            legs.setdefault(entry["leg"], []).append(entry["ref"])
    for index, entry in enumerate(entries):
        members = legs.get(entry.get("leg"), [])
        if "leg" in entry and len(members) != 2:
            builder.fail(document, ("switches", index, "leg"),
                         f'leg "{entry["leg"]}" has {len(members)} switches; a leg has two')
        elif "leg" in entry:
            pairs.setdefault(entry["ref"], next(ref for ref in members if ref != entry["ref"]))
    if not pairs and len(entries) == 2:
        first, second = (entry["ref"] for entry in entries)
        return {first: second, second: first}, True
    return pairs, False


def _build_capacitors(builder: Builder, document: Document) -> tuple[Capacitor, ...]:
    return tuple(
        Capacitor(
            ref=entry["ref"], path=("capacitors", index),
            rated_voltage=builder.quantity(document, ("capacitors", index, "rated_voltage"), "voltage", POSITIVE),
            capacitance=builder.interval(document, ("capacitors", index, "capacitance"), "capacitance", POSITIVE),
        )
        for index, entry in enumerate(document.data.get("capacitors", []))
    )


def _build_conditions(builder: Builder, document: Document) -> Conditions:
    def at(name: str, kind: str, sign: str | None = POSITIVE) -> Interval | None:
        return builder.interval(document, ("conditions", name), kind, sign)

    return Conditions(
        bus_voltage=at("bus_voltage", "voltage"),
        turn_off_current=at("turn_off_current", "current"),
        switching_frequency=at("switching_frequency", "frequency"),
        case_temperature=at("case_temperature", "temperature"),
        heatsink_temperature=at("heatsink_temperature", "temperature"),
        altitude=at("altitude", "altitude", sign=None),
    )


def _build_waivers(builder: Builder, document: Document, rule_ids: Collection[str] | None) -> tuple[Waiver, ...]:
    """The waivers, each rule id one of ``rule_ids`` (when given) and each expiry a calendar date."""
    waivers = []
    for index, entry in enumerate(document.data.get("waivers", [])):
        if rule_ids is not None and entry["rule"] not in rule_ids:
            hint = closest_name_hint(entry["rule"], rule_ids, "rule ids")
            builder.fail(document, ("waivers", index, "rule"), f'unknown rule id "{entry["rule"]}"{hint}')
        try:
            expires = datetime.date.fromisoformat(entry["expires"])
        except ValueError:
            builder.fail(document, ("waivers", index, "expires"), f'"{entry["expires"]}" is not a calendar date')
            continue
        waivers.append(Waiver(entry["rule"], entry["subject"], entry["reason"], entry["accepted_by"], expires,
                              ("waivers", index)))
    return tuple(waivers)


def _policy_values(document: Document, data: dict, where: DocPath, problems: list[Problem]) -> dict[str, float]:
    """The factors and the offset of one policy mapping (the file's top level, or one technology's entry) as
    floats. A non-finite factor and a negative offset are refused: no policy may set a limit beyond a rating."""
    values = {}
    for key, value in data.items():
        if key in ("format", "name", "basis", "tj", "technologies", "cosmic_ray_fit_budget"):
            continue
        if not math.isfinite(value):
            problems.append(document.problem(where + (key,), f"expected a finite number, got {value}"))
        values[key] = float(value)
    if "tj" in data:
        values["tj"] = parse_quantity(data["tj"], "temperature_difference")
        if values["tj"] < 0:  # the junction limit t_j_max - tj must stay at or below the rating
            problems.append(document.problem(where + ("tj",), f'must not be negative (got "{data["tj"]}"): the '
                                                              "junction limit is t_j_max - tj, and a policy may "
                                                              "only keep it at or below the rating"))
    return values


def _policy_file(document: Document, file_name: str, inputs: list[InputFile]) -> Policy:
    """A validated policy document laid over the default policy, with its per-technology factors (the schema
    bounds every factor to (0, 1] and names the keys a technology may set)."""
    data, problems = document.data, []
    values = _policy_values(document, data, (), problems)
    technologies = {technology: _policy_values(document, factors, ("technologies", technology), problems)
                    for technology, factors in data.get("technologies", {}).items()}
    if "cosmic_ray_fit_budget" in data:
        values["cosmic_ray_fit_budget"] = parse_quantity(data["cosmic_ray_fit_budget"], "failure_rate")
        if values["cosmic_ray_fit_budget"] <= 0:
            problems.append(document.problem(("cosmic_ray_fit_budget",), f'must be greater than zero (got '
                                                                          f'"{data["cosmic_ray_fit_budget"]}")'))
    if problems:
        raise InputError(problems)
    inputs.append(InputFile("policy", file_name, document.sha256))
    return policy_from_mapping(values, data["name"], data["basis"], Path(file_name), document.sha256, technologies)


def _chosen_policy(design: Document, override: str | None, builder: Builder, inputs: list[InputFile]) -> Policy:
    """The policy named on the command line (trusted, relative to the working directory), else the one the
    design names (a reference confined to the design's folder), else the default. A built-in name (the default,
    or a policy file shipped with margincheck) comes before a file of that name."""
    reference = override if override is not None else design.data.get("derating", DEFAULT_POLICY.name)
    if reference in BUILT_IN_POLICIES:
        return BUILT_IN_POLICIES[reference]
    shipped = shipped_policy_file(reference)
    if shipped is not None:
        return _policy_file(_load_checked(shipped, str(shipped), "policy", builder.limits), str(shipped), inputs)
    if override is not None:
        return _policy_file(_load_checked(Path(override), override, "policy", builder.limits), override, inputs)
    file_name = str(design.path.parent / reference)
    try:
        real_path = _existing(resolve_reference(design.path.parent, reference, builder.allowed_roots))
    except FileReferenceError as exc:
        raise InputError([design.problem(("derating",), f'policy file "{reference}": {exc}')]) from None
    return _policy_file(_load_checked(real_path, file_name, "policy", builder.limits), file_name, inputs)


def load_design(path: Path, policy: str | None = None, *, limits: Limits = DEFAULT_LIMITS,
                allowed_roots: Sequence[Path] = (), overrides: Sequence[Override] = (),
                rule_ids: Collection[str] | None = None) -> Design:
    """Read, validate and build a design file, its device files and its derating policy.

    Parameters
    ----------
    path : Path
        The design file.
    policy : str, optional
        A built-in policy name or a policy file path (relative to the working directory) that replaces the
        design's own ``derating`` entry.
    limits : Limits
        Size, nesting and alias bounds for every file read.
    allowed_roots : sequence of Path
        Folders besides the design's own that device and policy references may point into.
    overrides : sequence of Override
        ``--set`` changes applied, in order, to the design document before it is validated; a problem in an
        overridden field names the override. The design's SHA-256 stays that of the file's bytes.
    rule_ids : collection of str, optional
        The registered rule ids (``margincheck.rules.RULES``, which this layer does not import): a waiver
        naming any other id is a problem, with the closest id. None leaves waivers' rule ids unchecked.

    Raises
    ------
    InputError
        With every problem found, each located by file, line, column and field.
    """
    document = load_document(path, str(path), limits)
    applied = apply_overrides(document, overrides)
    try:
        design = _built_design(document, path, policy, Builder(limits, allowed_roots), rule_ids)
    except InputError as error:
        raise InputError(attribute_problems(error.problems, document.name, applied)) from None
    if not applied:
        return design
    return replace(design, overrides=applied,
                   warnings=tuple(attribute_problems(design.warnings, document.name, applied)))


def _built_design(document: Document, path: Path, policy: str | None, builder: Builder,
                  rule_ids: Collection[str] | None) -> Design:
    """The design of a read (and possibly overridden) document: validated, its files resolved, built."""
    problems = validate(document, "design")
    if problems:
        raise InputError(problems)
    inputs = [InputFile("design", document.name, document.sha256)]
    _check_unique_refs(builder, document)
    devices = _resolve_devices(builder, document, inputs)
    switches = _build_switches(builder, document, devices)
    capacitors = _build_capacitors(builder, document)
    conditions = _build_conditions(builder, document)
    loop_inductance = builder.interval(document, ("commutation_loop", "inductance"), "inductance", POSITIVE)
    loop_resistance = builder.interval(document, ("commutation_loop", "resistance"), "resistance", POSITIVE)
    node_capacitance = builder.interval(document, ("commutation_loop", "node_capacitance"), "capacitance",
                                        NON_NEGATIVE)
    opposites, pairing_inferred = _pairs(builder, document)
    waivers = _build_waivers(builder, document, rule_ids)
    captures = build_capture_specs(builder, document, lambda reference: _existing(
        resolve_reference(document.path.parent, reference, builder.allowed_roots)))
    if builder.problems:
        raise InputError(builder.problems)
    chosen = _chosen_policy(document, policy, builder, inputs)
    header = document.data.get("design", {})
    return Design(
        file=path, title=str(header.get("title", path.name)), revision=str(header.get("revision", "")),
        standard=header.get("standard"), policy=chosen, conditions=conditions, loop_inductance=loop_inductance,
        loop_resistance=loop_resistance,
        loop_quality_factor=get(document.data, ("commutation_loop", "quality_factor")),
        switches=switches, opposites=opposites, pairing_inferred=pairing_inferred, capacitors=capacitors,
        waivers=waivers, node_capacitance=node_capacitance, captures=captures,
        inputs=tuple(inputs),
        warnings=tuple(sorted(builder.warnings, key=Problem.sort_key)), document=document,
    )
