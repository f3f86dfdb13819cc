"""Monte Carlo over production spread: how likely each rule is to be violated, and how its margin spreads.

Every toleranced input is drawn from its distribution (uniform over its interval unless the design states a
normal one), independently per input and per switch (margincheck.rules.sampling), and every rule is evaluated
at every sample through the same code as its worst-case corners. The cell simulation costs far more per point
than a closed form, so the rules that read it are evaluated at the first ``simulated`` samples only (each
statistic states its sample count); the closed-form rules at all of them, in blocks.

The probability of violation counts the samples with a negative margin, a failure outright (a growing
oscillation, thermal runaway) or no computable value, with a Wilson score interval:

    p̃ = (k + z²/2)/(n + z²),   half-width = z·√(n)/(n + z²)·√(p̂(1 − p̂) + z²/(4n)),   p̂ = k/n

E. B. Wilson, "Probable inference, the law of succession, and statistical inference", J. Amer. Statist. Assoc.
22 (1927), pp. 209-212; the form above as in A. Agresti & B. A. Coull, "Approximate is better than 'exact' for
interval estimation of binomial proportions", The American Statistician 52(2), 1998, pp. 119-126, Eq. (2).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from margincheck.design import Design
from margincheck.findings import AT_LIMIT_SLACK, Finding
from margincheck.rules.registry import evaluate_at
from margincheck.rules.sampling import random_plan

__all__ = ["CONFIDENCE", "MonteCarloResult", "MonteCarloSettings", "RuleStatistics", "monte_carlo",
           "wilson_interval"]

#: Two-sided confidence of the stated intervals, and its standard normal quantile.
CONFIDENCE = 0.95
_Z = 1.959963984540054
#: Margin percentiles reported [%].
PERCENTILES = (1.0, 50.0, 99.0)
#: Samples evaluated at once by the closed-form pass (bounds its memory: some 30 arrays of this length).
BLOCK = 65_536

NOTES = (
    "inputs drawn independently (uniform over each tolerance unless a normal distribution is stated); the two "
    "devices of a leg spread independently",
    "rules that read another rule's result (the SOA and avalanche rules read the turn-off peak, the junction "
    "temperature reads the simulated switching energies) take that rule's worst sample, which overstates their "
    "probability",
    "a one-sided input ({max: ...}, e.g. a trip current) takes its stated end at every sample",
    "waivers are not applied",
)


def wilson_interval(violations: int, samples: int, z: float = _Z) -> tuple[float, float]:
    """Wilson score interval of a binomial proportion (Wilson 1927; Agresti & Coull 1998, Eq. 2).

    >>> low, high = wilson_interval(0, 100)
    >>> round(low, 6), round(high, 4)
    (0.0, 0.037)
    """
    if samples <= 0:
        return 0.0, 1.0
    share = violations / samples
    denominator = 1.0 + z * z / samples
    centre = (share + z * z / (2.0 * samples)) / denominator
    half = z / denominator * math.sqrt(share * (1.0 - share) / samples + z * z / (4.0 * samples * samples))
    low = 0.0 if violations == 0 else max(0.0, centre - half)      # exact at the ends, free of rounding
    high = 1.0 if violations == samples else min(1.0, centre + half)
    return low, high


@dataclass(frozen=True)
class MonteCarloSettings:
    """How many production samples to draw, the seed that makes them reproducible, and how many of them the
    cell simulation runs at."""

    samples: int
    seed: int = 0
    simulated: int = 200


@dataclass(frozen=True)
class RuleStatistics:
    """One rule and subject over the samples: how many, how many violated or not computable, the probability of
    violation with its Wilson interval, and margin percentiles (-inf where a sample fails outright or cannot
    be computed). ``simulated`` says whether the rule reads the cell simulation (fewer samples)."""

    rule: str
    subject: str
    samples: int
    violations: int
    not_computed: int
    probability: float
    interval: tuple[float, float]
    percentiles: dict[float, float]
    simulated: bool


@dataclass(frozen=True)
class MonteCarloResult:
    """The statistics of every rule and subject that the corner check evaluated, and how they were drawn."""

    samples: int
    simulated_samples: int
    seed: int
    confidence: float
    statistics: tuple[RuleStatistics, ...]
    notes: tuple[str, ...] = NOTES


def _statistics(finding: Finding, margins: np.ndarray | None, simulated: bool) -> RuleStatistics:
    if margins is None or margins.size == 0:
        return RuleStatistics(finding.rule, finding.subject, 0, 0, 0, math.nan, (math.nan, math.nan),
                              {level: math.nan for level in PERCENTILES}, simulated)
    not_computed = int(np.isnan(margins).sum())
    violations = int((margins < -AT_LIMIT_SLACK).sum())  # a failure outright is recorded as -inf
    bad = violations + not_computed
    filled = np.where(np.isnan(margins), -np.inf, margins)
    levels = np.percentile(filled, PERCENTILES, method="inverted_cdf")
    return RuleStatistics(finding.rule, finding.subject, int(margins.size), violations, not_computed,
                          bad / margins.size, wilson_interval(bad, int(margins.size)),
                          dict(zip(PERCENTILES, (float(level) for level in levels))), simulated)


def monte_carlo(design: Design, findings: tuple[Finding, ...] | list[Finding], samples: int, seed: int = 0,
                simulated: int = 200, progress: Callable[[int, int], None] | None = None) -> MonteCarloResult:
    """Probability of violation and margin percentiles of every finding's rule and subject over ``samples``
    random production samples (``seed`` makes them reproducible); the cell-simulated rules over the first
    ``simulated`` of them. ``progress(done, total)`` is called after each block of samples."""
    simulated = min(simulated, samples, BLOCK)
    with_cell = evaluate_at(design, random_plan(simulated, simulated, seed))[0] if simulated else {}
    closed_form: dict[tuple[str, str], list[np.ndarray]] = {}
    needs_cell: set[tuple[str, str]] = set()
    for block, start in enumerate(range(0, samples, BLOCK)):
        size = min(BLOCK, samples - start)
        margins, cell = evaluate_at(design, random_plan(size, 0, seed, block))
        needs_cell |= cell
        for key, values in margins.items():
            closed_form.setdefault(key, []).append(values)
        if progress is not None:
            progress(start + size, samples)
    statistics = []
    for finding in findings:
        key = (finding.rule, finding.subject)
        if key in needs_cell:
            statistics.append(_statistics(finding, with_cell.get(key), True))
        else:
            parts = closed_form.get(key)
            statistics.append(_statistics(finding, None if parts is None else np.concatenate(parts), False))
    return MonteCarloResult(samples, simulated, seed, CONFIDENCE, tuple(statistics))
