"""The segmentation DP is exactly optimal: equal to exhaustive search over every cut set (property test)."""

import itertools

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from scorecard.quantize.allocate import allocate_rows
from scorecard.quantize.curves import Option
from scorecard.quantize.nice import candidate_cuts, nice_step_units
from scorecard.quantize.segment import optimal_cuts, segment_table, smallest_cap


def _row_costs(s, w, cuts):
    bounds = [0, *cuts, len(s)]
    total, worst = 0.0, 0.0
    for a, b in zip(bounds[:-1], bounds[1:]):
        mean = np.average(s[a:b], weights=w[a:b])
        total += float((w[a:b] * (s[a:b] - mean) ** 2).sum())
        worst = max(worst, float(np.abs(s[a:b] - mean).max()))
    return total, worst


curves = st.integers(min_value=2, max_value=9).flatmap(
    lambda n: st.tuples(
        st.lists(st.floats(-3, 3, allow_nan=False), min_size=n, max_size=n),
        st.lists(st.floats(0.01, 5, allow_nan=False), min_size=n, max_size=n),
    )
)


@settings(max_examples=150, deadline=None)
@given(curves, st.integers(min_value=1, max_value=5), st.floats(0.05, 3), st.data())
def test_dp_equals_exhaustive_search(curve, rows, cap, data):
    s, w = np.array(curve[0]), np.array(curve[1])
    n = len(s)
    positions = list(range(1, n))
    allowed = sorted(data.draw(st.sets(st.sampled_from(positions), max_size=len(positions)))) if positions else []
    rows = min(rows, len(allowed) + 1)
    # exhaustive reference: every set of rows - 1 allowed cuts
    best_free, best_capped = None, None
    for cuts in itertools.combinations(allowed, rows - 1):
        cost, worst = _row_costs(s, w, list(cuts))
        best_free = cost if best_free is None else min(best_free, cost)
        if worst <= cap:
            best_capped = cost if best_capped is None else min(best_capped, cost)
    got = optimal_cuts(s, w, rows, allowed)
    assert got is not None and np.isclose(got[0], best_free, rtol=1e-9, atol=1e-9)
    assert np.isclose(_row_costs(s, w, got[1])[0], got[0], rtol=1e-9, atol=1e-9)
    capped = optimal_cuts(s, w, rows, allowed, cap)
    if best_capped is None:
        assert capped is None
    else:
        assert capped is not None and np.isclose(capped[0], best_capped, rtol=1e-9, atol=1e-9)
        assert _row_costs(s, w, capped[1])[1] <= cap + 1e-9


@settings(max_examples=80, deadline=None)
@given(curves, st.integers(min_value=1, max_value=4))
def test_smallest_cap_is_the_minimax(curve, rows):
    s, w = np.array(curve[0]), np.array(curve[1])
    n = len(s)
    rows = min(rows, n)
    want = min(_row_costs(s, w, list(c))[1] for k in range(1, rows + 1) for c in itertools.combinations(range(1, n), k - 1))
    got = smallest_cap(segment_table(s, w, np.arange(1, n)), rows)
    assert np.isclose(got, want, rtol=1e-9, atol=1e-12)


@settings(max_examples=100, deadline=None)
@given(st.lists(st.lists(st.tuples(st.integers(1, 4), st.floats(0, 10, allow_nan=False)), min_size=1, max_size=3), min_size=1, max_size=4),
       st.integers(1, 12))
def test_allocation_equals_exhaustive(options, budget):
    opts = [[Option(size=s, cost=c, layout=None, cap=0) for s, c in term] for term in options]
    best = None
    for pick in itertools.product(*[range(len(o)) for o in opts]):
        size = sum(opts[t][i].size for t, i in enumerate(pick))
        cost = sum(opts[t][i].cost for t, i in enumerate(pick))
        if size <= budget and (best is None or cost < best - 1e-12):
            best = cost
    got = allocate_rows(opts, budget)
    if best is None:
        assert got is None
    else:
        assert sum(opts[t][i].size for t, i in enumerate(got)) <= budget
        assert np.isclose(sum(opts[t][i].cost for t, i in enumerate(got)), best)


def test_nice_cuts_are_whole_steps():
    # whole years over 60-100; tens over 0-1000 (1, 2, 5 x 10^k steps: common practice for readable charts)
    assert nice_step_units(40) == 1
    assert nice_step_units(1000) == 20
    cuts = candidate_cuts(60, 100, 0)
    assert cuts[0] == 61 and cuts[-1] == 100 and np.all(np.diff(cuts) == 1)
    half_degrees = candidate_cuts(30.0, 42.0, 1)  # 120 tenths -> steps of 0.2 degrees
    assert np.all(half_degrees % 2 == 0)


@settings(max_examples=80, deadline=None)
@given(st.integers(min_value=2, max_value=9), st.integers(min_value=1, max_value=3), st.floats(0.05, 3), st.data())
def test_row_deviation_and_cap_shortcut_match_every_row(n, groups, cap, data):
    """The vectorised table of largest |score - row value| equals the row-by-row definition (numpy max over the
    row's pieces), for one or several column groups; and `within(cap)` only says yes when every row meets it."""
    values = st.floats(-3, 3, allow_nan=False)
    s = np.array(data.draw(st.lists(st.lists(values, min_size=groups, max_size=groups), min_size=n, max_size=n)))
    w = np.array(data.draw(st.lists(st.lists(st.floats(0.01, 5), min_size=groups, max_size=groups), min_size=n, max_size=n)))
    allowed = sorted(data.draw(st.sets(st.sampled_from(list(range(1, n))), max_size=n - 1)))
    table = segment_table(s, w, allowed)
    nodes = table.nodes
    for u in range(len(nodes)):
        for v in range(len(nodes)):
            if v <= u:
                assert table.deviation[u, v] == np.inf
                continue
            piece = s[nodes[u]:nodes[v]]
            mean = (w[nodes[u]:nodes[v]] * piece).sum(axis=0) / w[nodes[u]:nodes[v]].sum(axis=0)
            assert np.isclose(table.deviation[u, v], np.abs(piece - mean).max(), rtol=1e-9, atol=1e-12)
    assert np.isclose(table.whole_deviation(), table.deviation[0, -1], rtol=0, atol=0)
    finite = table.deviation[np.isfinite(table.deviation)]
    if table.within(cap):
        assert (finite <= cap).all()
