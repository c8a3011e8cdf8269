"""Margin guidance ("ratio or metres, whichever is greater") and the margin bands.

Reference: ANSI/HI 9.6.1-2012 minimum NPSHa/NPSH3 ratio or margin, whichever is greater, as
summarised in /work/shared/reference/check-values.md (from secondary summaries of the
standard; not read in the original). The band meanings are those of screening/base/states.py.
"""

from __future__ import annotations

import numpy as np
import pytest

from screening.base.states import AMPLE_MARGIN, BELOW_GUIDANCE, BELOW_NPSH3, MEETS_GUIDANCE
from screening.inputs.config import Policy, PolicyRule
from screening.inputs.policy import PolicyError, guidance_for
from screening.physics.margin import Guidance, margin_band

# ANSI/HI 9.6.1-2012 (check-values.md): chemical, S < 11000: 1.1 or 0.6 m.
HI_LOW = Guidance(1.1, 0.6, "ANSI/HI 9.6.1-2012 summary: 1.1 or 0.6 m")
# ANSI/HI 9.6.1-2012: petroleum, 1.1 or 1 m.
HI_PETROLEUM = Guidance(1.1, 1.0, "ANSI/HI 9.6.1-2012 summary: 1.1 or 1 m")


# --- "whichever is greater" -----------------------------------------------------------------


def test_margin_governs_for_small_npsh3():
    # NPSH3 = 2 m: 1.1·2 = 2.2 m < 2 + 0.6 = 2.6 m, so the 0.6 m margin governs.
    assert float(HI_LOW.head(2.0)) == pytest.approx(2.6, rel=1e-12)


def test_ratio_governs_for_large_npsh3():
    # NPSH3 = 10 m: 1.1·10 = 11 m > 10 + 0.6 = 10.6 m, so the ratio governs.
    assert float(HI_LOW.head(10.0)) == pytest.approx(11.0, rel=1e-12)


@pytest.mark.parametrize(("guidance", "crossover"), [(HI_LOW, 6.0), (HI_PETROLEUM, 10.0)])
def test_crossover_where_ratio_and_margin_agree(guidance, crossover):
    # ratio·N = N + margin at N = margin/(ratio − 1): 0.6/0.1 = 6 m and 1/0.1 = 10 m.
    n3 = np.array([0.5 * crossover, crossover, 2.0 * crossover])
    head = guidance.head(n3)
    np.testing.assert_allclose(head[0], n3[0] + guidance.margin, rtol=1e-12)
    np.testing.assert_allclose(head[1], guidance.ratio * crossover, rtol=1e-12)
    np.testing.assert_allclose(head[1], crossover + guidance.margin, rtol=1e-12)
    np.testing.assert_allclose(head[2], guidance.ratio * n3[2], rtol=1e-12)


def test_guidance_head_is_never_below_either_rule():
    n3 = np.linspace(0.1, 30.0, 300)
    head = HI_PETROLEUM.head(n3)
    assert np.all(head >= 1.1 * n3) and np.all(head >= n3 + 1.0)


# --- band edges -----------------------------------------------------------------------------
# Numbers chosen to be exact in binary floating point, so the edges are hit exactly:
# NPSH3 = 4 m, guidance 1.25 or 0.5 m -> guide = max(5.0, 4.5) = 5.0 m; ample ratio 1.5 -> 6 m.
EXACT = Guidance(1.25, 0.5, "test guidance with exact binary numbers")


def bands(npsha, npsh3=4.0, guidance=EXACT, ample_ratio=1.5):
    npsha = np.asarray(npsha, dtype=float)
    return margin_band(npsha, np.full(npsha.shape, npsh3), guidance, ample_ratio)


def test_band_edges():
    npsha = [3.99, 4.0, 4.99, 5.0, 5.99, 6.0, 9.0]
    expected = [
        BELOW_NPSH3,  # below NPSH3
        BELOW_GUIDANCE,  # exactly at NPSH3 is not below NPSH3
        BELOW_GUIDANCE,
        MEETS_GUIDANCE,  # exactly at the guidance meets it
        MEETS_GUIDANCE,
        AMPLE_MARGIN,  # exactly at the ample ratio is ample
        AMPLE_MARGIN,
    ]
    np.testing.assert_array_equal(bands(npsha), expected)


def test_band_edges_with_the_margin_governing():
    # NPSH3 = 1 m: guide = max(1.25, 1.5) = 1.5 m (the 0.5 m margin governs); ample
    # max(1.5, 1.5·1) = 1.5 m as well, so at the guidance the margin is already ample.
    np.testing.assert_array_equal(
        bands([0.75, 1.0, 1.25, 1.5], npsh3=1.0),
        [BELOW_NPSH3, BELOW_GUIDANCE, BELOW_GUIDANCE, AMPLE_MARGIN],
    )


def test_ample_is_never_below_the_guidance():
    # states.py: ample means "at or above both the guidance and the policy's ample ratio". An
    # ample ratio below the guidance ratio must not make a sample under the guidance ample.
    got = bands([4.5, 5.0], ample_ratio=1.1)  # 1.1·4 = 4.4 m < guide 5 m
    np.testing.assert_array_equal(got, [BELOW_GUIDANCE, AMPLE_MARGIN])


def test_band_with_hi_guidance_at_its_own_edge():
    # The guidance head itself (computed by Guidance.head) meets the guidance.
    n3 = np.array([2.0, 6.0, 10.0])
    guide = HI_LOW.head(n3)
    np.testing.assert_array_equal(
        margin_band(guide, n3, HI_LOW, ample_ratio=2.0), [MEETS_GUIDANCE] * 3
    )
    below = np.nextafter(guide, -np.inf)
    np.testing.assert_array_equal(
        margin_band(below, n3, HI_LOW, ample_ratio=2.0), [BELOW_GUIDANCE] * 3
    )


def test_band_shape_follows_input():
    out = margin_band(np.full((3, 2), 5.5), np.full((3, 2), 4.0), EXACT, 1.5)
    assert out.shape == (3, 2)
    assert np.all(out == MEETS_GUIDANCE)


# --- rules from the policy ------------------------------------------------------------------


def hi_power_plant_policy():
    # ANSI/HI 9.6.1-2012 (check-values.md): power plant (non-nuclear), S < 7500: 1.1 or
    # 0.6 m; S >= 7500: 1.2 or 1.0 m. Margins are written with their unit, as in configs.
    return Policy(
        ample_ratio=2.0,
        rules=(
            PolicyRule(
                application="power", max_suction_specific_speed=7500, ratio=1.1, margin="0.6 m"
            ),
            PolicyRule(
                application="power", min_suction_specific_speed=7500, ratio=1.2, margin="1.0 m"
            ),
        ),
    )


@pytest.mark.parametrize(
    ("s", "ratio", "margin"), [(6000.0, 1.1, 0.6), (7499.9, 1.1, 0.6), (7500.0, 1.2, 1.0)]
)
def test_guidance_for_suction_specific_speed(s, ratio, margin):
    g = guidance_for(hi_power_plant_policy(), "power", s)
    assert (g.ratio, g.margin) == (ratio, pytest.approx(margin, rel=1e-12))


def test_guidance_override_from_register():
    g = guidance_for(hi_power_plant_policy(), "power", 6000.0, ratio_override=1.3)
    assert g.ratio == 1.3 and g.margin == pytest.approx(0.6, rel=1e-12)
    assert "override" in g.source


def test_no_rule_for_the_application_raises():
    with pytest.raises(PolicyError, match="no policy rule for application 'chemical'"):
        guidance_for(hi_power_plant_policy(), "chemical", 6000.0)


# --- suction energy and rules that could never be missed -----------------------------------


def test_suction_energy_by_hand():
    # SE = De·n·S·SG in US units (ANSI/HI 9.6.1-1998 method, from memory): a 10 in eye at
    # 1480 rpm, S = 12000, SG 0.99 -> 10·1480·12000·0.99 = 175.8e6 (our arithmetic). High
    # suction energy from 160e6 (end suction) and 120e6 (double suction), very high from 1.5
    # times those, 240e6 and 180e6 (from memory, medium confidence; check-values.md).
    from screening.physics.curves import suction_energy, suction_energy_class

    se = suction_energy(0.254, 1480.0, 12000.0, 0.99)
    assert se == pytest.approx(175.824e6, rel=1e-12)
    assert suction_energy_class(se, 1, 160e6, 120e6, 1.5) == "high"
    assert suction_energy_class(se, 2, 160e6, 120e6, 1.5) == "high"
    assert suction_energy_class(239e6, 1, 160e6, 120e6, 1.5) == "high"
    assert suction_energy_class(250e6, 1, 160e6, 120e6, 1.5) == "very_high"
    assert suction_energy_class(150e6, 1, 160e6, 120e6, 1.5) == "low"
    assert suction_energy_class(185e6, 2, 160e6, 120e6, 1.5) == "very_high"


def _energy_policy():
    return Policy(
        rules=(
            PolicyRule(application="power", suction_energy="very_high", ratio=2.0, margin="1 m"),
            PolicyRule(application="power", suction_energy="high", ratio=1.3, margin="1 m"),
            PolicyRule(
                application="power", max_suction_specific_speed=7500, ratio=1.1, margin="0.6 m"
            ),
            PolicyRule(
                application="power", min_suction_specific_speed=7500, ratio=1.2, margin="1 m"
            ),
        )
    )


def test_suction_energy_class_picks_the_rule_and_unknown_falls_back():
    g = guidance_for(_energy_policy(), "power", 12000.0, suction_energy=175.8e6, eyes=1)
    assert (g.ratio, g.margin, g.suction_energy_class) == (1.3, 1.0, "high")
    assert "high suction energy" in g.source
    g = guidance_for(_energy_policy(), "power", 12000.0, suction_energy=300e6, eyes=1)
    assert (g.ratio, g.suction_energy_class) == (2.0, "very_high")
    g = guidance_for(_energy_policy(), "power", 12000.0, suction_energy=100e6, eyes=1)
    assert (g.ratio, g.margin, g.suction_energy_class) == (1.2, 1.0, "low")
    g = guidance_for(_energy_policy(), "power", 12000.0)  # no eye diameter
    assert (g.ratio, g.margin, g.suction_energy_class) == (1.2, 1.0, "unknown")
    assert "suction energy unknown (no impeller_eye_diameter): fell back" in g.source


def test_a_rule_equal_to_npsh3_is_refused():
    # guidance = max(1.0·NPSH3, NPSH3 + 0) = NPSH3: "below guidance" could never be counted
    with pytest.raises(ValueError, match="could never be counted"):
        PolicyRule(application="building", ratio=1.0, margin="0 m")
    with pytest.raises(ValueError, match="could never be counted"):
        PolicyRule(application="building", ratio=0.9, margin="0 m")
    PolicyRule(application="building", ratio=1.0, margin="0.3 m")  # a margin keeps a band
    with pytest.raises(PolicyError, match="could never be counted"):
        guidance_for(_energy_policy(), "power", 6000.0, ratio_override=1.0, margin_override=0.0)
