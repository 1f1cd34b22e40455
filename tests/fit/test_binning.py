import numpy as np

from scorecard.fit.binning import UNSEEN, bin_categorical, bin_numeric, coarse_bins, midpoint_cuts
from scorecard.model.predict import step_bins


def test_few_distinct_values_cut_halfway_between_neighbours():
    x = np.array([3.0, 1.0, 2.0, 2.0, 5.0, np.nan])
    bins = bin_numeric("m", x, np.ones(6), max_bins=256)
    assert bins.kind == "continuous"
    assert bins.edges.tolist() == [1.5, 2.5, 4.0]
    codes = bins.codes(x)
    assert codes.tolist() == [2, 0, 1, 1, 3, 4]  # NaN -> the not-measured slot n_bins
    # the document's reading of a step shape (edges[i-1] <= x < edges[i]) gives the same bins
    assert step_bins(bins.edges, x[:5]).tolist() == codes[:5].tolist()


def test_many_values_give_quantile_bins_near_numpy_quantiles():
    rng = np.random.default_rng(0)
    x = rng.normal(size=20_000)
    edges = midpoint_cuts(x, np.ones_like(x), max_bins=4)
    assert len(edges) == 3
    # quantile binning (common practice): cuts at the quartiles, numpy's quantile as the outside reference
    assert np.allclose(edges, np.quantile(x, [0.25, 0.5, 0.75]), atol=1e-3)
    assert len(midpoint_cuts(x, np.ones_like(x), max_bins=256)) == 255


def test_zero_one_column_is_a_flag_and_levels_are_pooled_when_rare():
    assert bin_numeric("f", np.array([0.0, 1.0, 1.0]), np.ones(3), 256).kind == "flag"
    values = np.array(["a"] * 20 + ["b"] * 20 + ["c"] * 2 + ["d"] * 3 + [None], dtype=object)
    bins = bin_categorical("c", values, np.ones(len(values)), min_level_count=10)
    assert bins.levels == ["a", "b", "c", "d"]
    assert bins.level_bin.tolist() == [0, 1, 2, 2]  # c and d share one bin
    codes = bins.codes(np.array(["a", "d", None, "zzz"], dtype=object))
    assert codes.tolist() == [0, 2, 3, UNSEEN]


def test_pair_bins_reuse_the_fine_cut_points():
    x = np.arange(1000, dtype=float)
    fine = bin_numeric("x", x, np.ones(1000), 256)
    counts = np.bincount(fine.codes(x), minlength=fine.n_slots).astype(float)
    mapping, edges = coarse_bins(fine, counts, 8)
    assert len(edges) == 7 and set(edges) <= set(fine.edges)
    assert mapping[-1] == -1 and mapping.max() == 7
    # coarse bin of every value == bin from the coarse edges
    assert np.array_equal(mapping[fine.codes(x)], np.searchsorted(edges, x, side="right"))
