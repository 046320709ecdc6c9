import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.stats import median_abs_deviation

from webapp.analysis import robust_scale
from webapp.analysis._robust import (
    MAD_TO_SD,
    band_scale_estimate,
    grouped_robust_scale,
    nanpercentile_rows,
    quiet_nan_warnings,
)


def test_constant_matches_scipy_normal_scale():
    # Source: SciPy reference, scipy.stats.median_abs_deviation(scale="normal") divides the
    # raw MAD by Phi^-1(3/4) = 0.67449 (docs/references.md: 1.482602218505602, computed).
    assert_allclose(MAD_TO_SD, 1.482602218505602, rtol=1e-12)
    x = np.random.default_rng(0).standard_t(3, size=501)
    assert_allclose(robust_scale(x), median_abs_deviation(x, scale="normal"), rtol=1e-12)


def test_textbook_example_shows_why_mad_is_robust():
    # Common practice: the textbook illustration 1, 2, 3, 4, 5, 6, 100 has median 4, raw MAD 2,
    # and a population standard deviation of about 33.8 (docs/references.md, computed).
    x = np.array([1, 2, 3, 4, 5, 6, 100], dtype=float)
    assert np.median(x) == 4
    assert_allclose(robust_scale(x) / MAD_TO_SD, 2.0)
    assert_allclose(np.std(x), 33.805, atol=5e-4)
    assert robust_scale(x) < 3 < 30 < np.std(x)


def test_pingouin_worked_example():
    # Source: pingouin `mad` documentation (docs/references.md, read): raw MAD 2.0, normalised
    # 2.965204437011204.
    assert_allclose(robust_scale([1.2, 5.4, 3.2, 7.8, 2.5]), 2.965204437011204, rtol=1e-12)


def test_nan_is_ignored_and_nothing_left_is_nan():
    assert_allclose(robust_scale([1, 2, np.nan, 3]), robust_scale([1, 2, 3]))
    assert np.isnan(robust_scale([np.nan, np.nan]))


def test_mostly_equal_values_fall_back_to_mean_absolute_deviation():
    x = np.array([0, 0, 0, 0, 0, 0, 4.0])
    assert robust_scale(x) == 0
    assert_allclose(band_scale_estimate(x), np.sqrt(np.pi / 2) * 4 / 7)


def test_grouped_scale_matches_per_group_calls():
    rng = np.random.default_rng(1)
    values = rng.normal(size=300)
    groups = rng.integers(0, 4, size=300)
    scales, counts = grouped_robust_scale(values, groups, 5)
    for g in range(4):
        assert_allclose(scales[g], robust_scale(values[groups == g]))
        assert counts[g] == (groups == g).sum()
    assert np.isnan(scales[4]) and counts[4] == 0


@pytest.mark.parametrize("n", [20_000])
def test_gaussian_mad_estimates_sigma(n):
    # Consistency: for normal data the normalised MAD estimates sigma (here 2.5).
    x = np.random.default_rng(2).normal(10, 2.5, size=n)
    assert_allclose(robust_scale(x), 2.5, rtol=0.03)


@pytest.mark.parametrize("seed", range(6))
def test_nanpercentile_rows_gives_numpys_nanpercentile(seed: int) -> None:
    """Against numpy's own ``nanpercentile`` (the reference implementation): random rows
    with holes, whole-NaN rows, ties, short decimals and infinities."""
    rng = np.random.default_rng(seed)
    matrix = np.round(rng.normal(size=(300, 1 + seed)) * 100, 1 + seed % 3)
    matrix[:, 0] = np.inf if seed % 2 else matrix[:, 0]
    matrix[rng.random(matrix.shape) < 0.3] = np.nan
    matrix[:5] = np.nan
    for q in (0, 10, 50, 90, 95, 100):
        with quiet_nan_warnings():
            expected = np.nanpercentile(matrix, q, axis=1)
            got = nanpercentile_rows(matrix, q)
        assert np.array_equal(np.isnan(got), np.isnan(expected))
        held = ~np.isnan(expected)  # the same bits, but for the sign of a tied zero
        assert (got[held] + 0.0).tobytes() == (expected[held] + 0.0).tobytes()
