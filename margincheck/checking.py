"""Run a check: design file in, report data out. Reporters render the ``Report``; the CLI picks one."""

from __future__ import annotations

import datetime
from dataclasses import dataclass
from pathlib import Path
from typing import Callable, Sequence

from margincheck import __version__
from margincheck.cautions import cautions_for
from margincheck.design import Design, load_design
from margincheck.findings import Finding, Verdict, exit_code, verdict_of
from margincheck.loading import DEFAULT_LIMITS, Limits
from margincheck.montecarlo import MonteCarloResult, MonteCarloSettings, monte_carlo
from margincheck.overrides import Override
from margincheck.rules import RULES, evaluate_design
from margincheck.rules.figures import SwitchingFigures, switching_figures, with_other_source_connection
from margincheck.rules.soa import SoaView, soa_view
from margincheck.sensitivity import with_sensitivities
from margincheck.waivers import WaiverOutcome, apply_waivers

__all__ = ["Report", "check_file"]


@dataclass(frozen=True)
class WhatIf:
    """The same design re-evaluated with the other source connection of every switch."""

    common_source_inductance: float
    connections: dict[str, str]
    findings: tuple[Finding, ...]
    figures: tuple[SwitchingFigures, ...]


@dataclass(frozen=True)
class Report:
    """Everything a reporter needs: the design checked, its findings, the verdict, the cautions and when the
    check ran (UTC)."""

    design: Design
    findings: tuple[Finding, ...]
    verdict: Verdict
    cautions: tuple[str, ...]
    generated_at: datetime.datetime
    figures: tuple[SwitchingFigures, ...] = ()
    what_if: WhatIf | None = None
    soa: tuple[SoaView, ...] = ()
    waivers: tuple[WaiverOutcome, ...] = ()
    monte_carlo: MonteCarloResult | None = None
    tool_version: str = __version__

    @property
    def exit_code(self) -> int:
        """0 when every finding passes (marginal included), 1 on any fail or not-evaluated finding."""
        return exit_code(self.verdict)


def _figures(design: Design) -> tuple[SwitchingFigures, ...]:
    return tuple(figures for figures in (switching_figures(switch, design) for switch in design.switches)
                 if figures is not None)


def _what_if(design: Design, common_source_inductance: float) -> WhatIf:
    other = with_other_source_connection(design, common_source_inductance)
    return WhatIf(common_source_inductance, {switch.ref: switch.source_connection for switch in other.switches},
                  tuple(evaluate_design(other)), _figures(other))


def check_file(path: Path, policy: str | None = None, *, limits: Limits = DEFAULT_LIMITS,
               allowed_roots: Sequence[Path] = (), what_if_source: float | None = None, use_waivers: bool = True,
               now: datetime.datetime | None = None, overrides: Sequence[Override] = (),
               sensitivities: bool = False, statistics: MonteCarloSettings | None = None,
               progress: Callable[[int, int], None] | None = None) -> Report:
    """Check one design file with its own derating policy, or with ``policy`` (a name or a file) instead.

    ``limits``, ``allowed_roots`` and ``overrides`` (``--set``) are passed to
    :func:`margincheck.design.load_design`. With ``what_if_source`` (a common-source inductance [H]) the
    report also compares every switch with the other source connection (kelvin <-> shared) at that inductance.
    The design's waivers apply unless ``use_waivers`` is false; a waiver's expiry is judged on the UTC date of
    ``now`` (default: the time of the run, which the report records). With ``sensitivities`` every finding
    ranks the inputs that move its margin most (margincheck.sensitivity); with ``statistics`` the report adds a
    Monte Carlo over production spread (margincheck.montecarlo), reporting each block of samples to
    ``progress(done, total)``.

    Raises
    ------
    margincheck.errors.InputError
        When the design, a device file or the policy cannot be read, validated or built.
    """
    now = now or datetime.datetime.now(datetime.timezone.utc)
    design = load_design(path, policy, limits=limits, allowed_roots=allowed_roots, overrides=overrides,
                         rule_ids=RULES)
    evaluated = evaluate_design(design)
    if sensitivities:
        evaluated = with_sensitivities(design, evaluated)
    findings, waivers = apply_waivers(evaluated, design.waivers, now.date(), ignore=not use_waivers)
    spread = None if statistics is None else monte_carlo(design, findings, statistics.samples, statistics.seed,
                                                          statistics.simulated, progress)
    return Report(design=design, findings=tuple(findings), verdict=verdict_of(findings),
                  cautions=tuple(cautions_for(design, findings)), figures=_figures(design),
                  soa=tuple(view for view in (soa_view(switch, design) for switch in design.switches) if view),
                  what_if=None if what_if_source is None else _what_if(design, what_if_source),
                  waivers=tuple(waivers), monte_carlo=spread, generated_at=now)
