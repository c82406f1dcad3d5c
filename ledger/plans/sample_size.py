"""Check a plan's sample-size justification with the statistics engine.

The computed figures and any warning are sealed with the plan, beside the inputs they came from,
so a reader of the record sees both what was claimed and what the numbers give.
"""

from __future__ import annotations

from typing import Any

from ledger.stats.errors import StatsInputError
from ledger.stats.power import plan_power_summary

# A stated power this far above the computed one is treated as rounding, not as a false claim
# (common practice, no source: half a percentage point).
POWER_ROUNDING_SLACK = 0.005
TWO_GROUP_DESIGNS = {"t_independent", "proportions"}


def engine_n(*, design: str, total: int, groups: int | None) -> int:
    """Translate the plan's total N into the N the engine's function for ``design`` expects.

    Two-group designs take the size of the first of two equal groups; ANOVA takes the size of
    each of ``groups`` equal groups (rounded down: a remainder adds no balanced power); the
    others take the total.
    """
    if design in TWO_GROUP_DESIGNS:
        return total // 2
    if design == "anova_oneway":
        return total // groups
    return total


def power_inputs(sample_size: dict[str, Any]) -> dict[str, Any] | None:
    """The inputs of the power computation, or None when the plan does not ask for one."""
    design = sample_size.get("power_design") or ""
    if not design:
        return None
    return {
        "design": design,
        "effect": sample_size.get("effect_size"),
        "alpha": sample_size.get("alpha") if sample_size.get("alpha") is not None else 0.05,
        "sides": sample_size.get("sides") or "two",
        "n_total": sample_size.get("planned_n"),
        "groups": sample_size.get("groups"),
        "df": sample_size.get("chi_df"),
    }


def power_figures(inputs: dict[str, Any]) -> dict[str, Any]:
    """Power at the planned total N and the total N for 80 % and 90 % power.

    Raises StatsInputError (with ``field`` naming the plan's input) when the inputs cannot be used.
    """
    design = inputs["design"]
    if inputs["effect"] is None:
        raise StatsInputError("give the target effect size to compute power", field="effect_size")
    if design == "anova_oneway" and not inputs["groups"]:
        raise StatsInputError("give the number of groups for a one-way ANOVA", field="groups")
    if design == "chi_square" and not inputs["df"]:
        raise StatsInputError("give the degrees of freedom of the chi-square test", field="chi_df")
    n = inputs["n_total"]
    if n is not None:
        n = engine_n(design=design, total=n, groups=inputs["groups"])
        if n < 2:
            raise StatsInputError("the planned N is too small to compute power for this design", field="planned_n")
    summary = plan_power_summary(
        design=design,
        effect=abs(inputs["effect"]),
        alpha=inputs["alpha"],
        sides=inputs["sides"],
        n=n,
        k_groups=inputs["groups"],
        df=inputs["df"],
    )
    at_n = summary.at_planned_n
    return {
        "method": summary.for_power_80.method,
        "power_at_n": at_n.power if at_n else None,
        "n_for_80": summary.for_power_80.n_total,
        "n_for_90": summary.for_power_90.n_total,
    }


def sample_size_assessment(content: dict[str, Any]) -> tuple[dict[str, Any], list[str]]:
    """Return (computed figures, warnings) for the plan's sample-size section."""
    sample_size = content.get("sample_size", {})
    inputs = power_inputs(sample_size)
    if inputs is None:
        return {}, []
    try:
        figures = power_figures(inputs)
    except StatsInputError as error:
        return {"inputs": inputs, "error": str(error)}, [
            f"Power could not be computed: {error}. The justification is sealed as written."
        ]
    computed = {"inputs": inputs, **figures}
    target = sample_size.get("target_power")
    if not falls_short(figures, target):
        return computed, []
    return computed, [
        f"The plan states {target:.0%} power, but N = {inputs['n_total']} gives {figures['power_at_n']:.0%} "
        f"for an effect of {inputs['effect']} at alpha {inputs['alpha']} ({inputs['sides']}-sided). "
        f"N = {figures['n_for_80']} would give 80% power."
    ]


def falls_short(figures: dict[str, Any], target: float | None) -> bool:
    """The computed power at the planned N is below the power the plan claims."""
    achieved = figures.get("power_at_n")
    return target is not None and achieved is not None and achieved + POWER_ROUNDING_SLACK < target


def power_sentence(inputs: dict[str, Any], figures: dict[str, Any], *, target: float | None) -> str:
    """The live figures in one sentence, for the plan editor."""
    design_effect = f"an effect of {abs(inputs['effect'])} at alpha {inputs['alpha']}, {inputs['sides']}-sided"
    needs = f"80% power needs N = {figures['n_for_80']}; 90% needs N = {figures['n_for_90']}"
    if figures["power_at_n"] is None:
        return f"For {design_effect}: {needs} ({figures['method']})."
    sentence = (
        f"With N = {inputs['n_total']}, power is {figures['power_at_n']:.0%} for {design_effect}. "
        f"{needs[0].upper()}{needs[1:]} ({figures['method']})."
    )
    if falls_short(figures, target):
        sentence += f" This is below the {target:.0%} the plan states: sealing will ask you to confirm."
    return sentence
