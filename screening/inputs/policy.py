"""Margin guidance per pump from the plant file's policy rules.

The guidance is "a ratio NPSHa/NPSH3 or a margin NPSHa − NPSH3 in metres, whichever is
greater" (ANSI/HI 9.6.1-2012, Table 9.6.1.1, as summarised in secondary sources). The values
are data in the plant file's policy, never truth hard-coded here.
"""

from __future__ import annotations

from screening.inputs.config import Policy
from screening.physics.margin import Guidance


class PolicyError(ValueError):
    """No policy rule applies to a pump."""


def guidance_for(
    policy: Policy,
    application: str,
    suction_specific_speed: float,
    ratio_override: float | None = None,
    margin_override: float | None = None,
) -> Guidance:
    """The guidance of a pump from the policy's first matching rule.

    Parameters
    ----------
    policy : Policy
        The plant's margin policy.
    application : str
        The pump's application class (must match a rule's ``application``).
    suction_specific_speed : float
        S in U.S. customary units (rpm, gpm, ft) [-].
    ratio_override, margin_override : float, optional
        Per-pump values from the register [-] and [m]; they replace the rule's.
    """
    for i, rule in enumerate(policy.rules):
        if rule.matches(application, suction_specific_speed):
            ratio = rule.ratio if ratio_override is None else ratio_override
            margin = rule.margin if margin_override is None else margin_override
            src = f"policy rule {i + 1} ({rule.application}"
            if rule.min_suction_specific_speed is not None:
                src += f", S >= {rule.min_suction_specific_speed:g}"
            if rule.max_suction_specific_speed is not None:
                src += f", S < {rule.max_suction_specific_speed:g}"
            src += ")"
            if ratio_override is not None or margin_override is not None:
                src += " with register override"
            return Guidance(ratio, margin, src)
    apps = sorted({r.application for r in policy.rules})
    raise PolicyError(
        f"no policy rule for application {application!r} at suction specific speed "
        f"{suction_specific_speed:.0f} (applications in the policy: {', '.join(apps)})"
    )
