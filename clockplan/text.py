"""The words and number formats every view shares: verdicts, shares, rates, settings.

The terminal tables, the tree, the picture, the header, the report and the JSON all say
the same thing because they take their words from here. No solver, no rich.
"""

from __future__ import annotations

from fractions import Fraction

from clockplan.evaluate import Evaluation, RateCheck
from clockplan.peripherals.base import AT_RISK_SHARE, format_rate, format_share
from clockplan.plan import Plan, SettingValue, divider_key, pll_keys
from clockplan.quantities import exact_string, format_hz
from clockplan.result import RankedPlan
from clockplan.scenario import Divider, Mux, Pll, Scenario

__all__ = [
    "AT_RISK_SHARE",
    "PASS",
    "AT_RISK",
    "FAIL",
    "rate_verdict",
    "worst_verdict",
    "format_share",
    "format_rate",
    "proof_text",
    "exact_decimal",
    "setting_text",
    "rate_settings",
    "rate_setting_text",
    "shown_value",
    "setting_values",
    "register_value",
    "limit_text",
    "loop_text",
]

PASS, AT_RISK, FAIL = "pass", "at risk", "fail"


def rate_verdict(check: RateCheck) -> str:
    """``"pass"``, ``"at risk"`` (share above 0.8, our own convention; never for a maximum
    rate, which the search drives close to its limit on purpose) or ``"fail"``."""
    if not check.passes:
        return FAIL
    return AT_RISK if check.at_risk else PASS


def worst_verdict(checks: list[RateCheck] | tuple[RateCheck, ...]) -> str:
    """The worst verdict among ``checks`` (``"pass"`` when there are none)."""
    verdicts = {rate_verdict(check) for check in checks}
    return next((verdict for verdict in (FAIL, AT_RISK) if verdict in verdicts), PASS)


def exact_decimal(value: Fraction | int) -> str:
    """An exact value as a whole number, a terminating decimal, or ``"p/q"``."""
    value = Fraction(value)
    if value.denominator == 1:
        return str(value.numerator)
    denominator, twos, fives = value.denominator, 0, 0
    while denominator % 2 == 0:
        denominator, twos = denominator // 2, twos + 1
    while denominator % 5 == 0:
        denominator, fives = denominator // 5, fives + 1
    if denominator != 1:
        return exact_string(value)
    places = max(twos, fives)
    scaled = abs(value) * 10**places
    whole, digits = divmod(int(scaled), 10**places)
    sign = "-" if value < 0 else ""
    return f"{sign}{whole}.{digits:0{places}d}"


def setting_text(scenario: Scenario, plan: Plan, name: str) -> str:
    """What a clock node is set to, in words: ``"÷2"``, ``"÷1 ×60 + 3/8"``, ``"input bus"``."""
    node = scenario.node(name)
    if isinstance(node, Pll):
        reference_key, multiplier_key, fraction_key = pll_keys(name)
        text = f"÷{plan.settings.get(reference_key)} ×{plan.settings.get(multiplier_key)}"
        fraction = plan.settings.get(fraction_key, 0)
        if node.fraction_bits and fraction:
            text += f" + {fraction}/{2**node.fraction_bits}"
        return text
    if isinstance(node, Divider):
        return f"÷{plan.settings.get(divider_key(name))}"
    if isinstance(node, Mux):
        chosen = plan.mux_input(name)
        index = node.inputs.index(str(chosen)) if chosen in node.inputs else "?"
        return f"input {chosen} ({index} of 0..{len(node.inputs) - 1})"
    return ""


def register_value(check: RateCheck) -> Fraction:
    """The rate's divisor as the peripheral holds it: the count ÷ its option's factor."""
    return Fraction(check.divisor, check.option.factor)


def rate_settings(check: RateCheck, plan: Plan) -> dict[str, SettingValue]:
    """The plan's settings behind one rate, by full key: its divisor (or stages) and option."""
    keys = check.requirement.setting_keys
    return {key: plan.settings[key] for key in keys if key in plan.settings}


def shown_value(check: RateCheck, key: str, value: SettingValue) -> str:
    """One of a rate's settings as every output shows it: a divisor as the peripheral holds
    it (32.5625, not the count 521 in sixteenths), an option by its label."""
    requirement = check.requirement
    if key == requirement.setting:
        return exact_decimal(register_value(check))
    if key == requirement.option_setting:
        return check.option.label or str(value)
    return str(value)


def setting_values(plan: Plan, evaluation: Evaluation) -> dict[str, str]:
    """Every setting of the plan as shown, by key (see :func:`shown_value`)."""
    shown = {key: str(value) for key, value in plan.settings.items()}
    for check in evaluation.checks:
        for key, value in rate_settings(check, plan).items():
            shown[key] = shown_value(check, key, value)
    return shown


def rate_setting_text(check: RateCheck, plan: Plan) -> str:
    """The settings behind one rate in words: ``"divisor_115200 = 32.5625"``, stages, option."""
    requirement = check.requirement
    parts = [
        f"{key.split('.', 1)[-1]} = {shown_value(check, key, value)}"
        for key, value in rate_settings(check, plan).items()
        if key != requirement.option_setting
    ]
    if check.option.label:
        parts.append(check.option.label)
    return ", ".join(parts)


def limit_text(check: RateCheck) -> str:
    """What the rate must meet: its allowance, or ``"≤ 25 MHz"`` for a maximum."""
    return check.limit_text


def proof_text(ranked: RankedPlan) -> str:
    """ "proved", or the first stage the time limit stopped."""
    return "proved" if not ranked.unproved else f"not proved: {ranked.unproved[0]}"


def loop_text(evaluation: Evaluation, name: str) -> str:
    """A PLL's phase-detector and VCO frequencies, ``"PFD 6 MHz, VCO 180.6 MHz"`` (empty for
    any other node): the first figures an engineer checks against the chip's limits."""
    if name not in evaluation.detectors:
        return ""
    return f"PFD {format_hz(evaluation.detectors[name])}, VCO {format_hz(evaluation.clocks[name])}"
