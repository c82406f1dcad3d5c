"""A-priori power and sample size.

Each design has one public function that solves for exactly one of ``n``, ``power`` and
``effect``: pass the other two and leave the unknown as ``None``.

* Solving for ``n`` returns the smallest whole number of participants whose power reaches the
  target, together with the power achieved at that ``n`` (never below the target). The search
  doubles ``n`` and then bisects, assuming power rises with ``n`` (true for every design here);
  it stops at :data:`MAX_N_PER_GROUP` per group and raises :class:`StatsInputError` when even
  that is not enough.
* Solving for ``effect`` gives the minimum detectable effect: the effect whose power at ``n``
  equals the target, found with :func:`scipy.optimize.brentq` on a bracket that starts at zero
  (where power equals alpha) and widens until power passes the target.
* Solving for ``power`` evaluates the power function.

Effects are given as positive magnitudes. A two-sided test has the same power for -d and d,
and a one-sided test is planned in the predicted direction, so the sign carries no information.

Methods, by function (named again in :attr:`PowerSolution.method`):

=============================  ==============================================================
``power_t_independent``        exact noncentral t, df = n1 + n2 - 2, ncp = d sqrt(n1 n2 / N)
``power_t_paired``             exact noncentral t on the differences, d = d_z, df = n - 1
``power_t_one_sample``         exact noncentral t, df = n - 1, ncp = d sqrt(n)
``power_proportions``          normal approximation on Cohen's h (arcsine), as
                               statsmodels ``NormalIndPower`` and R ``pwr.2p.test``/``2p2n``
``power_correlation_exact``    exact distribution of Pearson's r under bivariate normality
                               (the method G*Power calls "exact"); see the function
``power_correlation_fisher_z`` plain Fisher z: atanh(r) sqrt(n - 3) against normal quantiles
``power_anova_oneway``         noncentral F, df = (k - 1, N - k), lambda = f^2 N
``power_chi_square``           noncentral chi-square, lambda = w^2 N, df given
=============================  ==============================================================

R's ``pwr.r.test`` uses neither correlation method: it takes the critical r from the t
distribution, shifts both z values by r / (2 (n - 1)) (Cohen 1988, p. 546) and applies the
normal approximation, so its sample sizes can differ by one from both functions here.

Two-sided power counts rejections in both tails, as statsmodels and R's pwr do.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Literal

import numpy as np
from scipy import optimize, special, stats

from ledger.stats import _inputs
from ledger.stats._inputs import Sides
from ledger.stats.errors import StatsInputError

# The bounded search for n gives up here. Ten million per group is far beyond any study a lab
# could run, so failing to reach the target power below it means the effect is too small (or
# the power too close to 1) to plan for.
MAX_N_PER_GROUP = 10_000_000

# Effects on unbounded scales (d, f, w) are searched up to this size. An effect this large that
# still misses the target means n is too small for the requested power.
MAX_EFFECT = 1e6

# Gauss-Legendre nodes for the exact correlation integral. The integrand is smooth on a finite
# range, so 96 nodes agree with adaptive quadrature and with Hotelling's exact density of r to
# about 1e-13 for 3 <= n <= 10^7 (checked in the tests).
_CORRELATION_NODES = 96

Unknown = Literal["n", "power", "effect"]
PowerSides = Literal["two", "one", "upper"]
CorrelationMethod = Literal["exact", "fisher_z"]


@dataclass(frozen=True)
class PowerSolution:
    """The completed triple (n, power, effect) of a power analysis.

    ``n`` is the size of the first (or only) group; ``group_sizes`` lists every group and
    ``n_total`` is their sum. ``power`` is the power achieved at these group sizes, which is at
    least the requested power when ``solved_for == "n"``. ``sides`` is ``"upper"`` for the F and
    chi-square designs, whose tests reject only in the upper tail.
    """

    solved_for: Unknown
    n: int
    group_sizes: tuple[int, ...]
    n_total: int
    power: float
    effect: float
    alpha: float
    sides: PowerSides
    method: str


@dataclass(frozen=True)
class _Design:
    """What the generic solver needs to know about one design.

    Invariant: ``power_at(effect, n)`` rises with ``n`` and with ``effect`` and equals alpha at
    effect 0; the bounded searches below rely on it.
    """

    method: str
    sides: PowerSides
    min_n: int
    effect_limit: float
    power_at: Callable[[float, int], float]
    group_sizes: Callable[[int], tuple[int, ...]]


# --- the power functions themselves -----------------------------------------------------------


def _t_test_power(*, noncentrality: float, df: float, alpha: float, sides: Sides) -> float:
    if sides == "one":
        return float(stats.nct.sf(stats.t.isf(alpha, df), df, noncentrality))
    critical = stats.t.isf(alpha / 2, df)
    # The lower tail P(T < -c | ncp) is written as P(T > c | -ncp): SciPy's nct.cdf returns NaN
    # far in the lower tail for large ncp, while nct.sf stays finite there.
    return float(stats.nct.sf(critical, df, noncentrality) + stats.nct.sf(critical, df, -noncentrality))


def _normal_test_power(*, noncentrality: float, alpha: float, sides: Sides, df: float | None = None) -> float:
    # ``df`` is accepted and unused so that this and _t_test_power are interchangeable.
    if sides == "one":
        return float(stats.norm.sf(stats.norm.isf(alpha) - noncentrality))
    critical = stats.norm.isf(alpha / 2)
    return float(stats.norm.sf(critical - noncentrality) + stats.norm.cdf(-critical - noncentrality))


def _correlation_exact_power(*, r: float, n: int, alpha: float, sides: Sides) -> float:
    """Exact power of the t test of Pearson's r (H0: rho = 0) under bivariate normality.

    Regressing Y on X, the test of r is the t test of the slope. Given X, that t statistic is
    noncentral t with n - 2 df and ncp = rho / sqrt(1 - rho^2) * S, where S^2 is the sum of
    squares of the standardised X about its mean, so S follows a chi distribution with n - 1
    df. Power is therefore the conditional noncentral-t power averaged over S; the average is a
    Gauss-Legendre integral over the central 1 - 2e-15 of that chi distribution, normalised by
    the integral of its density over the same nodes so that truncation cancels.
    """
    df = n - 2
    critical = stats.t.isf(alpha / 2 if sides == "two" else alpha, df)
    slope = r / math.sqrt(1.0 - r * r)
    low, high = stats.chi.ppf(1e-15, n - 1), stats.chi.isf(1e-15, n - 1)
    nodes, weights = special.roots_legendre(_CORRELATION_NODES)
    s = low + (high - low) * (nodes + 1.0) / 2.0
    density_weights = weights * stats.chi.pdf(s, n - 1)
    conditional = stats.nct.sf(critical, df, slope * s)
    if sides == "two":
        conditional = conditional + stats.nct.sf(critical, df, -slope * s)
    return float(np.clip(np.dot(density_weights, conditional) / density_weights.sum(), 0.0, 1.0))


def _two_group_sizes(ratio: float) -> Callable[[int], tuple[int, ...]]:
    def sizes(n1: int) -> tuple[int, ...]:
        # round() first: 1.1 * 10 is 11.000000000000002 in binary and must not become 12.
        return (n1, math.ceil(round(ratio * n1, 9)))

    return sizes


def _single_group(n: int) -> tuple[int, ...]:
    return (n,)


def _two_group_min_n(ratio: float) -> int:
    # Each group needs at least 2 participants: n1 >= 2 and ceil(ratio * n1) >= 2.
    return max(2, math.floor(1.0 / ratio) + 1)


# --- the generic solver -----------------------------------------------------------------------


def _one_unknown(*, n: object, power: object, effect: object) -> Unknown:
    unknowns = [name for name, value in (("n", n), ("power", power), ("effect", effect)) if value is None]
    if len(unknowns) != 1:
        raise StatsInputError(
            "leave exactly one of n, power and effect empty (None) and give the other two; "
            f"empty now: {', '.join(unknowns) or 'none'}",
            field=unknowns[1] if len(unknowns) > 1 else "n",
        )
    return unknowns[0]  # type: ignore[return-value]


def _checked_effect(effect: object, design: _Design) -> float:
    value = _inputs.real(effect, field="effect")
    if not 0.0 < value < design.effect_limit:
        limit = "" if math.isinf(design.effect_limit) else f" and below {design.effect_limit:g}"
        raise StatsInputError(
            f"effect must be greater than 0{limit}; got {effect!r}. Give the size without its "
            "sign: a one-sided test is planned in the predicted direction.",
            field="effect",
        )
    return value


def _checked_target_power(power: object, alpha: float) -> float:
    value = _inputs.open_unit(power, field="power")
    if value <= alpha:
        raise StatsInputError(
            f"power must exceed alpha ({alpha:g}): a test has power alpha with no effect at "
            f"all; got {power!r}. Typical targets are 0.8 or 0.9.",
            field="power",
        )
    return value


def _smallest_n(design: _Design, effect: float, target: float) -> int:
    def reaches(n: int) -> bool:
        return design.power_at(effect, n) >= target

    below = design.min_n
    if reaches(below):
        return below
    above = below
    while not reaches(above):
        if above >= MAX_N_PER_GROUP:
            raise StatsInputError(
                f"no n up to {MAX_N_PER_GROUP:,} per group reaches power {target:g} for effect "
                f"{effect:g} at this alpha; plan for a larger effect or a lower power, or "
                "justify the sample size in words.",
                field="power",
            )
        below, above = above, min(2 * above, MAX_N_PER_GROUP)
    # Invariant: power at `below` misses the target and power at `above` reaches it.
    while above - below > 1:
        middle = (below + above) // 2
        if reaches(middle):
            above = middle
        else:
            below = middle
    return above


def _minimum_detectable_effect(design: _Design, n: int, target: float) -> float:
    def shortfall(effect: float) -> float:
        return design.power_at(effect, n) - target

    if math.isinf(design.effect_limit):
        upper = 1.0
        while shortfall(upper) < 0:
            if upper >= MAX_EFFECT:
                raise StatsInputError(
                    f"no effect up to {MAX_EFFECT:g} reaches power {target:g} with n = {n}; "
                    "increase n or lower the power.",
                    field="n",
                )
            upper *= 2.0
    else:
        # Bounded scales (r < 1, h <= pi): stay just inside the limit, where power is defined.
        upper = design.effect_limit * (1.0 - 1e-12)
        if shortfall(upper) < 0:
            raise StatsInputError(
                f"even the largest possible effect does not reach power {target:g} with n = "
                f"{n}; increase n or lower the power.",
                field="n",
            )
    # At effect 0 power equals alpha, which is below the target, so the bracket holds a root.
    return float(optimize.brentq(shortfall, 0.0, upper, xtol=1e-12, rtol=1e-12))


def _solve(design: _Design, *, n: object, power: object, effect: object, alpha: float) -> PowerSolution:
    unknown = _one_unknown(n=n, power=power, effect=effect)
    if unknown == "n":
        effect_value = _checked_effect(effect, design)
        n_value = _smallest_n(design, effect_value, _checked_target_power(power, alpha))
    elif unknown == "effect":
        n_value = _inputs.whole(n, field="n", minimum=design.min_n)
        effect_value = _minimum_detectable_effect(design, n_value, _checked_target_power(power, alpha))
    else:
        n_value = _inputs.whole(n, field="n", minimum=design.min_n)
        effect_value = _checked_effect(effect, design)
    group_sizes = design.group_sizes(n_value)
    return PowerSolution(
        solved_for=unknown,
        n=n_value,
        group_sizes=group_sizes,
        n_total=sum(group_sizes),
        power=design.power_at(effect_value, n_value),
        effect=effect_value,
        alpha=alpha,
        sides=design.sides,
        method=design.method,
    )


# --- public functions, one per design -----------------------------------------------------------


def _two_group(
    *,
    n: object,
    power: object,
    effect: object,
    alpha: object,
    sides: object,
    ratio: object,
    method: str,
    effect_limit: float,
    test_power: Callable[..., float],
) -> PowerSolution:
    """Solve a two-group design whose test statistic has noncentrality effect sqrt(n1 n2 / N).

    ``test_power(noncentrality=, df=, alpha=, sides=)`` is the power of the test itself.
    """
    checked_alpha = _inputs.open_unit(alpha, field="alpha")
    checked_sides = _inputs.sides(sides)
    checked_ratio = _inputs.positive(ratio, field="ratio")
    group_sizes = _two_group_sizes(checked_ratio)

    def power_at(size: float, n1: int) -> float:
        first, second = group_sizes(n1)
        return test_power(
            noncentrality=size * math.sqrt(first * second / (first + second)),
            df=first + second - 2,
            alpha=checked_alpha,
            sides=checked_sides,
        )

    design = _Design(
        method=method,
        sides=checked_sides,
        min_n=_two_group_min_n(checked_ratio),
        effect_limit=effect_limit,
        power_at=power_at,
        group_sizes=group_sizes,
    )
    return _solve(design, n=n, power=power, effect=effect, alpha=checked_alpha)


def power_t_independent(
    *,
    n: int | None = None,
    power: float | None = None,
    effect: float | None = None,
    alpha: float = 0.05,
    sides: Sides = "two",
    ratio: float = 1.0,
) -> PowerSolution:
    """Independent-samples t test; ``effect`` is Cohen's d, ``n`` the size of group 1.

    Group 2 has ``ceil(ratio * n)`` participants (``ratio`` = n2 / n1, 1 for equal groups).
    Method: exact noncentral t with df = n1 + n2 - 2.
    """
    return _two_group(
        n=n,
        power=power,
        effect=effect,
        alpha=alpha,
        sides=sides,
        ratio=ratio,
        method="exact noncentral t (independent samples)",
        effect_limit=math.inf,
        test_power=_t_test_power,
    )


def _single_sample_t(
    *, n: object, power: object, effect: object, alpha: object, sides: object, method: str
) -> PowerSolution:
    alpha = _inputs.open_unit(alpha, field="alpha")
    checked_sides = _inputs.sides(sides)

    def power_at(d: float, size: int) -> float:
        return _t_test_power(noncentrality=d * math.sqrt(size), df=size - 1, alpha=alpha, sides=checked_sides)

    design = _Design(
        method=method,
        sides=checked_sides,
        min_n=2,
        effect_limit=math.inf,
        power_at=power_at,
        group_sizes=_single_group,
    )
    return _solve(design, n=n, power=power, effect=effect, alpha=alpha)


def power_t_one_sample(
    *,
    n: int | None = None,
    power: float | None = None,
    effect: float | None = None,
    alpha: float = 0.05,
    sides: Sides = "two",
) -> PowerSolution:
    """One-sample t test; ``effect`` is d = (mean - mu0) / SD. Method: exact noncentral t."""
    return _single_sample_t(
        n=n,
        power=power,
        effect=effect,
        alpha=alpha,
        sides=sides,
        method="exact noncentral t (one sample)",
    )


def power_t_paired(
    *,
    n: int | None = None,
    power: float | None = None,
    effect: float | None = None,
    alpha: float = 0.05,
    sides: Sides = "two",
) -> PowerSolution:
    """Paired t test; ``n`` is the number of pairs and ``effect`` is d_z (mean / SD of the
    differences), so this is the one-sample test on the differences. Method: exact noncentral t.
    """
    return _single_sample_t(
        n=n,
        power=power,
        effect=effect,
        alpha=alpha,
        sides=sides,
        method="exact noncentral t (paired differences, d_z)",
    )


def power_proportions(
    *,
    n: int | None = None,
    power: float | None = None,
    effect: float | None = None,
    alpha: float = 0.05,
    sides: Sides = "two",
    ratio: float = 1.0,
) -> PowerSolution:
    """Two independent proportions; ``effect`` is Cohen's h = |2 asin sqrt(p1) - 2 asin sqrt(p2)|.

    ``n`` is the size of group 1, group 2 has ``ceil(ratio * n)``. Method: normal approximation,
    power = Phi(h sqrt(n1 n2 / N) - z) (+ the other tail when two-sided).
    """
    return _two_group(
        n=n,
        power=power,
        effect=effect,
        alpha=alpha,
        sides=sides,
        ratio=ratio,
        method="normal approximation on Cohen's h (arcsine)",
        effect_limit=math.pi,
        test_power=_normal_test_power,
    )


def power_correlation_exact(
    *,
    n: int | None = None,
    power: float | None = None,
    effect: float | None = None,
    alpha: float = 0.05,
    sides: Sides = "two",
) -> PowerSolution:
    """Test of H0: rho = 0; ``effect`` is the population correlation, ``n`` the sample size.

    Method: exact distribution of r under bivariate normality (see
    :func:`_correlation_exact_power`); the test rejects when the t statistic
    r sqrt(n - 2) / sqrt(1 - r^2) passes the t critical value with n - 2 df.
    """
    alpha = _inputs.open_unit(alpha, field="alpha")
    sides = _inputs.sides(sides)

    def power_at(r: float, size: int) -> float:
        return _correlation_exact_power(r=r, n=size, alpha=alpha, sides=sides)

    design = _Design(
        method="exact (bivariate normal distribution of r)",
        sides=sides,
        min_n=3,
        effect_limit=1.0,
        power_at=power_at,
        group_sizes=_single_group,
    )
    return _solve(design, n=n, power=power, effect=effect, alpha=alpha)


def power_correlation_fisher_z(
    *,
    n: int | None = None,
    power: float | None = None,
    effect: float | None = None,
    alpha: float = 0.05,
    sides: Sides = "two",
) -> PowerSolution:
    """Test of H0: rho = 0 by the plain Fisher z approximation.

    Method: atanh(r) sqrt(n - 3) is taken as normal with unit variance and compared with normal
    quantiles, with no bias term. For two-sided 80 % power this reproduces the familiar
    n = ((z_{1-alpha/2} + z_{0.8}) / atanh(r))^2 + 3, rounded up.
    """
    alpha = _inputs.open_unit(alpha, field="alpha")
    sides = _inputs.sides(sides)

    def power_at(r: float, size: int) -> float:
        return _normal_test_power(noncentrality=math.atanh(r) * math.sqrt(size - 3), alpha=alpha, sides=sides)

    design = _Design(
        method="Fisher z approximation",
        sides=sides,
        min_n=4,
        effect_limit=1.0,
        power_at=power_at,
        group_sizes=_single_group,
    )
    return _solve(design, n=n, power=power, effect=effect, alpha=alpha)


def power_anova_oneway(
    *,
    n: int | None = None,
    power: float | None = None,
    effect: float | None = None,
    alpha: float = 0.05,
    k_groups: int,
) -> PowerSolution:
    """One-way ANOVA with ``k_groups`` equal groups of ``n``; ``effect`` is Cohen's f.

    Method: noncentral F with df = (k - 1, N - k) and lambda = f^2 N, N = k n. The F test
    rejects only in the upper tail, so there is no ``sides``.
    """
    alpha = _inputs.open_unit(alpha, field="alpha")
    k = _inputs.whole(k_groups, field="k_groups", minimum=2)

    def power_at(f: float, per_group: int) -> float:
        total = k * per_group
        critical = stats.f.isf(alpha, k - 1, total - k)
        return float(stats.ncf.sf(critical, k - 1, total - k, f * f * total))

    design = _Design(
        method="noncentral F (one-way ANOVA)",
        sides="upper",
        min_n=2,
        effect_limit=math.inf,
        power_at=power_at,
        group_sizes=lambda per_group: (per_group,) * k,
    )
    return _solve(design, n=n, power=power, effect=effect, alpha=alpha)


def power_chi_square(
    *,
    n: int | None = None,
    power: float | None = None,
    effect: float | None = None,
    alpha: float = 0.05,
    df: int,
) -> PowerSolution:
    """Chi-square goodness-of-fit or contingency test; ``effect`` is Cohen's w, ``n`` the total.

    ``df`` is the test's degrees of freedom (cells - 1 for goodness of fit, (r - 1)(c - 1) for
    an r x c table). Method: noncentral chi-square with lambda = w^2 N, upper tail only.
    """
    alpha = _inputs.open_unit(alpha, field="alpha")
    degrees = _inputs.whole(df, field="df", minimum=1)

    def power_at(w: float, total: int) -> float:
        critical = stats.chi2.isf(alpha, degrees)
        return float(stats.ncx2.sf(critical, degrees, w * w * total))

    design = _Design(
        method="noncentral chi-square",
        sides="upper",
        min_n=1,
        effect_limit=math.inf,
        power_at=power_at,
        group_sizes=_single_group,
    )
    return _solve(design, n=n, power=power, effect=effect, alpha=alpha)


# --- plan page convenience ----------------------------------------------------------------------

PLAN_DESIGNS: tuple[str, ...] = (
    "t_independent",
    "t_paired",
    "t_one_sample",
    "proportions",
    "correlation",
    "anova_oneway",
    "chi_square",
)
_TWO_GROUP_DESIGNS = ("t_independent", "proportions")
_UPPER_TAIL_DESIGNS = ("anova_oneway", "chi_square")


@dataclass(frozen=True)
class PlanPowerSummary:
    """Power at the planned N (``None`` when no N was planned) and the N for 80 % and 90 %."""

    design: str
    at_planned_n: PowerSolution | None
    for_power_80: PowerSolution
    for_power_90: PowerSolution


def _design_solver(
    *,
    design: str,
    sides: str,
    ratio: float,
    k_groups: int | None,
    df: int | None,
    correlation_method: str,
) -> Callable[..., PowerSolution]:
    """The solver for ``design`` with its design-specific arguments bound."""
    if design not in PLAN_DESIGNS:
        raise StatsInputError(
            f"no a-priori power method is available for the test family {design!r}. Enter the "
            "sample-size justification in words (resource limit, precision, simulation, "
            f"published benchmark). Families with a power method: {', '.join(PLAN_DESIGNS)}.",
            field="design",
        )
    if ratio != 1.0 and design not in _TWO_GROUP_DESIGNS:
        raise StatsInputError(
            f"ratio (n2 / n1) applies only to {' and '.join(_TWO_GROUP_DESIGNS)}; leave it at 1 for {design}",
            field="ratio",
        )
    if design in _UPPER_TAIL_DESIGNS:
        if sides != "two":
            raise StatsInputError(
                f"{design} tests reject only in the upper tail and have no one-sided form; use "
                'sides="two" (for a directional test of two groups plan a t test instead)',
                field="sides",
            )
        if design == "anova_oneway":
            if k_groups is None:
                raise StatsInputError(
                    "k_groups is required for anova_oneway: give the number of groups (2 or more)",
                    field="k_groups",
                )
            return lambda **known: power_anova_oneway(k_groups=k_groups, **known)
        if df is None:
            raise StatsInputError(
                "df is required for chi_square: cells - 1 for goodness of fit, (rows - 1) x "
                "(columns - 1) for a contingency table",
                field="df",
            )
        return lambda **known: power_chi_square(df=df, **known)
    if design == "correlation":
        solvers = {"exact": power_correlation_exact, "fisher_z": power_correlation_fisher_z}
        if correlation_method not in solvers:
            raise StatsInputError(
                f'correlation_method must be "exact" or "fisher_z"; got {correlation_method!r}',
                field="correlation_method",
            )
        solver = solvers[correlation_method]
        return lambda **known: solver(sides=sides, **known)
    if design in _TWO_GROUP_DESIGNS:
        solver = power_t_independent if design == "t_independent" else power_proportions
        return lambda **known: solver(sides=sides, ratio=ratio, **known)
    solver = power_t_paired if design == "t_paired" else power_t_one_sample
    return lambda **known: solver(sides=sides, **known)


def plan_power_summary(
    *,
    design: str,
    effect: float,
    alpha: float,
    sides: Sides,
    n: int | None = None,
    ratio: float = 1.0,
    k_groups: int | None = None,
    df: int | None = None,
    correlation_method: CorrelationMethod = "exact",
) -> PlanPowerSummary:
    """Power at the planned ``n`` plus the ``n`` needed for 80 % and 90 % power.

    ``design`` is one of :data:`PLAN_DESIGNS`; ``n`` means what it means for that design's
    function (group 1 for two-group designs, per group for ANOVA, total for chi-square).
    ``k_groups`` is required for ``"anova_oneway"``, ``df`` for ``"chi_square"``. Any other
    design key raises :class:`StatsInputError` saying that no a-priori power method exists for
    it and that the justification should be entered in words.
    """
    solve = _design_solver(
        design=design,
        sides=sides,
        ratio=_inputs.positive(ratio, field="ratio"),
        k_groups=k_groups,
        df=df,
        correlation_method=correlation_method,
    )
    return PlanPowerSummary(
        design=design,
        at_planned_n=None if n is None else solve(n=n, effect=effect, alpha=alpha),
        for_power_80=solve(power=0.8, effect=effect, alpha=alpha),
        for_power_90=solve(power=0.9, effect=effect, alpha=alpha),
    )
