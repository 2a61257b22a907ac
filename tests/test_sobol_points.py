"""The point store gives SciPy's own scrambled Sobol points and leaves the generator as SciPy's draw does.

The reference is SciPy's ``qmc.Sobol`` itself (a general-purpose reference library), called here
directly; the store must agree bit for bit, on a miss, on a hit, and after a damaged file.
"""

import numpy as np
import pytest
from scipy.stats import qmc

from costcheck.numerics import sobol_points


def _reference(d, m, seed):
    rng = np.random.default_rng(seed)
    unit = qmc.Sobol(d=d, scramble=True, seed=rng).random_base2(m)
    return unit, rng.random(4)  # what the generator gives next, after SciPy's scrambling


@pytest.mark.parametrize("d, m", [(2, 5), (4, 10)])
def test_miss_then_hit_are_scipys_points_and_stream(d, m):
    unit, after = _reference(d, m, 11)
    for _ in range(2):  # the first call draws and stores, the second reads back
        rng = np.random.default_rng(11)
        assert np.array_equal(sobol_points.unit_points(d, m, rng), unit)
        assert np.array_equal(rng.random(4), after)
    assert len(list(sobol_points.points_directory().rglob("*.npz"))) == 1


def test_a_damaged_file_is_drawn_afresh():
    unit, _ = _reference(3, 6, 5)
    sobol_points.unit_points(3, 6, np.random.default_rng(5))
    (path,) = sobol_points.points_directory().rglob("*.npz")
    path.write_bytes(b"not an archive")
    assert np.array_equal(sobol_points.unit_points(3, 6, np.random.default_rng(5)), unit)


def test_another_seed_is_another_key():
    a = sobol_points.unit_points(2, 4, np.random.default_rng(1))
    b = sobol_points.unit_points(2, 4, np.random.default_rng(2))
    assert not np.array_equal(a, b)


def test_scaled_is_qmc_scale_and_keeps_its_refusal():
    unit, _ = _reference(2, 4, 3)
    lower, upper = np.array([-1.0, 0.5]), np.array([2.0, 0.75])
    assert np.array_equal(sobol_points.scaled(unit, lower, upper), qmc.scale(unit, lower, upper))
    with pytest.raises(ValueError):
        sobol_points.scaled(unit, upper, lower)
