"""The calculation's compiled passes give what their numpy forms give, and what the step by
step definitions give (to the last bit where the calculator relies on it).

The references are the plain numpy forms beside each loop and the definitions they fuse:
``screening.physics.npsh`` (ISO 9906:2012 / ANSI/HI 1.3), the fluid table's own look-up,
``screening.physics.margin.margin_band`` and ``screening.physics.regions.operating_region``.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from screening.base import calc_kernels as ck
from screening.base import states
from screening.physics import regions

sorted_unique = st.lists(st.integers(0, 10**6), max_size=120).map(
    lambda v: np.unique(np.array(v, dtype=np.int64))
)


def _random_pieces(rng, n: int):
    """Values of the kinds the calculator meets: NaN, zero, negative and ordinary."""
    npsha = rng.normal(8.0, 4.0, n)
    npsh3 = rng.normal(4.0, 2.0, n)
    for a in (npsha, npsh3):
        a[rng.random(n) < 0.1] = np.nan
    npsh3[rng.random(n) < 0.02] = 0.0
    p_abs = rng.normal(2e5, 1.5e5, n)
    return npsha, npsh3, p_abs


@settings(max_examples=150, deadline=None)
@given(base=sorted_unique, pieces=st.lists(sorted_unique, max_size=5))
def test_the_grid_is_the_union_of_every_time_axis(base, pieces):
    expected = np.append(np.union1d(base, np.concatenate([base, *pieces])), 10**7)
    np.testing.assert_array_equal(ck.merge_axes(base, pieces, 10**7), expected)
    np.testing.assert_array_equal(ck.merge_axes_numpy(base, pieces, 10**7), expected)


@pytest.mark.parametrize("random_state", [5, 6])
def test_axes_missing_a_few_samples_each_merge_into_one_grid(random_state):
    """The usual case: a wide file's tags each lack a few samples (blanks dropped), the
    barometer is on its own slower axis and the window's midnights fall between samples."""
    rng = np.random.default_rng(random_state)
    full = np.arange(0, 43_200 * 60, 60, dtype=np.int64) * 10**9
    axes = [np.sort(rng.choice(full, len(full) - k, replace=False)) for k in (0, 13, 200, 5)]
    axes.append(np.arange(7, 43_200 * 60, 600, dtype=np.int64) * 10**9)  # another clock
    base = np.arange(0, 31, dtype=np.int64) * 86_400 * 10**9 + 30 * 10**9
    out = ck.merge_axes(base, axes, 43_200 * 60 * 10**9)
    np.testing.assert_array_equal(out[:-1], np.unique(np.concatenate([base, *axes])))
    assert out[-1] == 43_200 * 60 * 10**9
    # a missing sample of the longest axis that another axis holds is still a cut
    assert ck.merge_axes(base[:1], [full[1:], full[:2]], 10**15)[0] == full[0]


@pytest.mark.parametrize("random_state", [1, 2, 3])
def test_margin_states_match_the_margin_bands(random_state):
    from screening.physics.margin import Guidance, margin_band

    rng = np.random.default_rng(random_state)  # fixed random state
    n = 4000
    npsha, npsh3, p_abs = _random_pieces(rng, n)
    running = rng.random(n) < 0.7
    decide_bad = rng.random(n) < 0.05
    run_bad = decide_bad | (rng.random(n) < 0.05)
    all_until = rng.integers(0, 10**6, n)
    decide_until = rng.integers(0, 10**6, n)
    guidance = Guidance(1.3, 1.0, "test")
    codes = (states.OFF_CURVE, states.BAD_DATA, states.STOPPED)
    args = (npsha, npsh3, p_abs, running, decide_bad, run_bad, all_until, decide_until,
            guidance.ratio, guidance.margin, 2.5, codes)  # fmt: skip
    got = ck.margin_codes(*args)
    for a, b in zip(got, ck.margin_codes_numpy(*args), strict=True):
        np.testing.assert_array_equal(a, b)
    # the bands themselves are screening.physics.margin's
    plain = (~run_bad & (p_abs > 0) & running & ~decide_bad
             & np.isfinite(npsha) & np.isfinite(npsh3))  # fmt: skip
    with np.errstate(invalid="ignore"):
        bands = margin_band(npsha, npsh3, guidance, 2.5)
    np.testing.assert_array_equal(got[0][plain], bands[plain])
    assert set(np.unique(got[0][~running & ~decide_bad])) <= {states.STOPPED}


@pytest.mark.parametrize("distinct", [400, 5000])
def test_a_repeated_temperature_gets_the_same_properties_to_the_bit(distinct):
    # the table look-up reuses a temperature's properties from its cache (held repeats, and
    # values met again later: 5000 distinct values overflow the cache, so entries collide
    # and are replaced); each value looked up alone (no reuse possible) is the reference
    from screening.base.kernels import table_eval

    rng = np.random.default_rng(11)  # fixed random state
    ln_pv = np.log(np.linspace(600.0, 9e4, 101))
    rho_t = np.linspace(1000.0, 950.0, 101)
    table = (273.15, 373.15, 1.0, ln_pv, rho_t)
    values = np.round(rng.uniform(260.0, 390.0, distinct), 2)  # a resolution, as stored
    temp = np.repeat(rng.choice(values, 4000), rng.integers(1, 5, 4000))
    temp[rng.random(len(temp)) < 0.05] = np.nan
    temp[rng.random(len(temp)) < 0.01] = -0.0
    p_v, rho = table_eval(temp, *table)
    alone = [table_eval(temp[i : i + 1], *table) for i in range(len(temp))]
    np.testing.assert_array_equal(p_v, [a[0][0] for a in alone])
    np.testing.assert_array_equal(rho, [a[1][0] for a in alone])
    assert np.isnan(p_v[(temp < 273.15) | (temp > 373.15)]).all()  # outside the table: NaN


@pytest.mark.parametrize("gauge", [True, False])
def test_transmitter_npsha_is_the_step_by_step_definition_to_the_bit(gauge):
    # the definitions: screening.physics.npsh (ISO 9906:2012, ANSI/HI 1.3)
    from screening.physics import npsh

    rng = np.random.default_rng(13)  # fixed random state
    n = 5000
    reading = rng.normal(1e5, 5e4, n)
    baro = rng.normal(101325.0, 500.0, n)
    p_v = rng.uniform(600.0, 9e4, n)
    rho = rng.uniform(950.0, 1000.0, n)
    for a in (reading, p_v, rho):
        a[rng.random(n) < 0.03] = np.nan
    flow = rng.uniform(0.0, 0.2, n)
    bore, elevation = 0.2, -0.4
    args = (reading, baro, gauge, p_v, rho, flow, float(npsh.pipe_area(bore)), elevation)
    p_abs, npsha = ck.transmitter_npsha(*args)
    p_ref = npsh.absolute_pressure(reading, baro, gauge)
    np.testing.assert_array_equal(p_abs, p_ref)
    np.testing.assert_array_equal(
        npsha, npsh.npsha_from_pressure(p_ref, p_v, rho, flow, bore, elevation)
    )
    for a, b in zip((p_abs, npsha), ck.transmitter_npsha_numpy(*args), strict=True):
        np.testing.assert_array_equal(a, b)


def test_region_states_match_the_operating_regions():
    rng = np.random.default_rng(5)  # fixed random state
    n = 4000
    flow = rng.uniform(-0.01, 0.3, n)
    flow[rng.random(n) < 0.05] = np.nan
    ratio = rng.uniform(0.6, 1.3, n)
    edges = regions.region_edges(0.1, ratio, 0.7, 1.2, 0.03, 0.02, 0.25)
    edges = tuple(np.broadcast_to(np.asarray(e, dtype=np.float64), (n,)) for e in edges)
    running = rng.random(n) < 0.7
    decide_bad = rng.random(n) < 0.05
    r_bad = decide_bad | (rng.random(n) < 0.05)
    r_until = rng.integers(0, 10**6, n)
    decide_until = rng.integers(0, 10**6, n)
    codes = (regions.PREFERRED, regions.LOW_FLOW, regions.BELOW_MIN_FLOW, regions.HIGH_FLOW,
             regions.BEYOND_ALLOWABLE, regions.BAD_DATA, regions.STOPPED)  # fmt: skip
    args = (flow, edges, running, decide_bad, r_bad, r_until, decide_until, codes)
    got = ck.region_codes(*args)
    for a, b in zip(got, ck.region_codes_numpy(*args), strict=True):
        np.testing.assert_array_equal(a, b)
    plain = running & ~r_bad & ~decide_bad
    expected = regions.operating_region(flow, edges)
    np.testing.assert_array_equal(got[0][plain], expected[plain])


@pytest.mark.parametrize("random_state", [3, 4])
@pytest.mark.parametrize("with_speed", [True, False])
def test_piece_sums_match_the_numpy_form(random_state, with_speed):
    rng = np.random.default_rng(random_state)  # fixed random state
    n = 3000
    day_edges = np.array([0, 10**6, 2 * 10**6, 3 * 10**6], dtype=np.int64)
    grid = np.unique(np.concatenate([day_edges[:-1], rng.integers(0, 3 * 10**6, n)]))
    n = len(grid)
    t_next = np.append(grid[1:], day_edges[-1])
    code = rng.integers(0, 9, n).astype(np.int8)
    code[rng.random(n) < 0.3] = states.BELOW_NPSH3
    rcode = rng.integers(0, 9, n).astype(np.int8)
    until = grid + rng.integers(-100, 2000, n)
    r_until = grid + rng.integers(-100, 2000, n)
    npsha, npsh3, p_abs = _random_pieces(rng, n)
    # a piece is in a margin band only where both heads are known (the margin states' rule)
    code[(code <= states.AMPLE_MARGIN) & ~(np.isfinite(npsha) & np.isfinite(npsh3))] = 4
    p_v = rng.normal(1e5, 5e4, n)
    speed = rng.uniform(0.6, 1.4, n) if with_speed else np.empty(0)
    baro = (rng.random(n) < 0.8, rng.random(n) < 0.1, rng.random(n) < 0.5)
    par = (1.3, 1.0, 0.8, 1.2, states.AMPLE_MARGIN, states.OFF_CURVE, states.STOPPED)
    args = ((code, until), (rcode, r_until), grid, t_next, day_edges, (9, 9, states.NO_DATA),
            (npsha, npsh3, p_abs, p_v), speed, baro, par)  # fmt: skip
    got, ref = ck.piece_sums(*args), ck.piece_sums_numpy(*args)
    for a, b in zip(got[:4], ref[:4], strict=True):
        np.testing.assert_array_equal(a, b)
    np.testing.assert_array_equal(np.array(got[4], dtype=float), np.array(ref[4], dtype=float))
    assert got[5:] == ref[5:]
    # every nanosecond of every day is in one state of each kind
    assert got[0].sum() == got[1].sum() == day_edges[-1] - grid[0]


#: Own tags of pumps with a run status, with speed and no run status, and vessel-fed.
ROLE_SETS = [
    ("run", "flow", "suction", "temperature"),
    ("flow", "speed", "suction", "temperature"),
    ("run", "flow", "speed", "level", "vessel_pressure"),
]


@pytest.mark.parametrize("random_state", [21, 22, 23])
@pytest.mark.parametrize("roles", ROLE_SETS)
def test_folds_as_tags_are_held_equal_each_tags_own_folded(random_state, roles):
    """The timeline folds the bad flags and fresh-until times of a pump's own tags while it
    holds them (timeline.hold_roles); the definitions are lineflow.decide's (the deciding
    tags) and the calculator's (flow and speed for the region, every own tag for a running
    piece), each tag held alone (timeline.held_at). A tag may be missing from the exports."""
    from types import SimpleNamespace

    from screening.engine import lineflow
    from screening.engine.timeline import OWN_ROLES, folds_of, held_at, hold_roles
    from screening.inputs.pumpspec import TagSpec
    from screening.inputs.tagdata import TagQuality, TagSeries

    rng = np.random.default_rng(random_state)  # fixed random state
    grid = np.unique(rng.integers(0, 10**6, 3000))
    # each tag's stale limit [s]: the plant's default (None) or its own
    specs = {r: TagSpec(r, "-", "any", [None, 50e-6, 5e-3][rng.integers(3)]) for r in roles}
    tags = {}
    for r in roles:
        t = np.unique(rng.integers(-1000, 10**6, rng.integers(0, 2000)))
        tags[r] = TagSeries(r, t, rng.normal(size=len(t)), rng.random(len(t)) < 0.1,
                            TagQuality(r))  # fmt: skip
    tags[roles[-1]] = None  # no samples of this tag in the exports
    pump = SimpleNamespace(**{r: specs.get(r) for r in OWN_ROLES}, header_flow=None,
                           peer_tags=dict)  # fmt: skip
    held, folds = hold_roles(pump, tags, grid, 1e-4)
    alone = held_at(pump, tags, grid, 1e-4)
    assert list(held) == list(alone)
    for r in held:
        np.testing.assert_array_equal(held[r].value, alone[r].value)
        np.testing.assert_array_equal(held[r].bad, alone[r].bad)
        np.testing.assert_array_equal(held[r].until, alone[r].until)
    _, d_bad, d_until = lineflow.decide(alone.get("run"), alone["flow"], alone.get("speed"),
                                        1.0, 1.0, 0.1, 0.1)  # fmt: skip
    r_bad, r_until, a_bad, a_until = d_bad, d_until, d_bad, d_until
    for r in ("flow", "speed"):
        if r in alone:
            r_bad, r_until = r_bad | alone[r].bad, np.minimum(r_until, alone[r].until)
    for r in OWN_ROLES:
        if r in alone:
            a_bad, a_until = a_bad | alone[r].bad, np.minimum(a_until, alone[r].until)
    # as folded while holding, and from tags each held alone (a timeline drawn by lines)
    for f in (folds, folds_of(alone)):
        for got, want in ((f.decide_bad, d_bad), (f.decide_until, d_until),
                          (f.region_bad, r_bad), (f.region_until, r_until),
                          (f.all_bad, a_bad), (f.all_until, a_until)):  # fmt: skip
            np.testing.assert_array_equal(got, want)
