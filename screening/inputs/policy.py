"""Margin guidance per pump from the plant file's policy rules.

The guidance is "a ratio NPSHa/NPSH3 or a margin NPSHa − NPSH3 in metres, whichever is
greater" (ANSI/HI 9.6.1-2012, Table 9.6.1.1, as summarised in secondary sources). The values
are data in the plant file's policy, never truth hard-coded here.
"""

from __future__ import annotations

from screening.inputs.config import Policy
from screening.physics.curves import suction_energy_class
from screening.physics.margin import Guidance


class PolicyError(ValueError):
    """No policy rule applies to a pump."""


def guidance_for(
    policy: Policy,
    application: str,
    suction_specific_speed: float,
    ratio_override: float | None = None,
    margin_override: float | None = None,
    suction_energy: float | None = None,
    eyes: int = 1,
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
    suction_energy : float, optional
        De·n·S·SG in U.S. units [-] (see :func:`screening.physics.curves.suction_energy`);
        None when the register gives no impeller eye diameter: rules for a suction-energy
        class then do not apply and the source says so.
    eyes : int
        1 for a single-suction (end-suction) impeller, 2 for double suction [-].
    """
    limits = policy.suction_energy
    energy_class = "unknown"
    if suction_energy is not None:
        energy_class = suction_energy_class(
            suction_energy, eyes, limits.end_suction_high, limits.double_suction_high,
            limits.very_high_factor,
        )  # fmt: skip
    for i, rule in enumerate(policy.rules):
        if rule.matches(application, suction_specific_speed, energy_class):
            ratio = rule.ratio if ratio_override is None else ratio_override
            margin = rule.margin if margin_override is None else margin_override
            if ratio <= 1.0 and margin <= 0.0:
                raise PolicyError(
                    f"guidance ratio {ratio:g} with margin {margin:g} m (register override) "
                    "equals NPSH3, so 'below guidance' could never be counted; give a ratio "
                    "above 1 or a margin above 0 m"
                )
            src = f"policy rule {i + 1} ({rule.application}"
            if rule.min_suction_specific_speed is not None:
                src += f", S >= {rule.min_suction_specific_speed:g}"
            if rule.max_suction_specific_speed is not None:
                src += f", S < {rule.max_suction_specific_speed:g}"
            if rule.suction_energy is not None:
                src += f", {rule.suction_energy.replace('_', ' ')} suction energy"
            src += ")"
            if suction_energy is None and any(r.suction_energy for r in policy.rules):
                src += "; suction energy unknown (no impeller_eye_diameter): fell back"
            if ratio_override is not None or margin_override is not None:
                src += " with register override"
            energy = float("nan") if suction_energy is None else float(suction_energy)
            return Guidance(ratio, margin, src, energy, energy_class)
    apps = sorted({r.application for r in policy.rules})
    raise PolicyError(
        f"no policy rule for application {application!r} at suction specific speed "
        f"{suction_specific_speed:.0f} (applications in the policy: {', '.join(apps)})"
    )
