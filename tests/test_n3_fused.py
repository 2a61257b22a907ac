"""The n = 3 margin on columns (space_columns, orthogonal_search; run jitted by n3/fused_margin)
against the per-pair path (space_margin, biquadratic).

Sources: our own per-pair path (numba, Ma, Trudinger & Wang, Arch. Ration. Mech. Anal. 177 (2005)
151–183, the form ``G(ξ, ξ, η, η)``), and mpmath at 40 digits for the form at the returned vectors.
The column code is the code the jitted kernel traces; here it runs on numpy (fast), and the
jitted end-to-end run is compared once where ``COSTCHECK_TEST_JIT_N3`` is set (its four programs
compile for about a minute on a cold cache).
"""

import os
from pathlib import Path

import mpmath
import numpy as np
import pytest

from costcheck.numerics.curvature.n3 import biquadratic, orthogonal_search, space_columns, space_margin
from costcheck.numerics.sampling import sample_pairs
from costcheck.spec.loader import load_cost

CATALOG = Path(__file__).resolve().parent.parent / "catalog"
FIELDS = ("dxy", "dxxy", "dxyy", "dxxyy")


def _per_pair(d):
    """``(g, inv, scale, valid)`` of the per-pair kernel."""
    fields = [np.ascontiguousarray(np.moveaxis(np.asarray(getattr(d, f), float), 0, -1)) for f in FIELDS]
    N = fields[0].shape[-1]
    g, g32 = np.empty((N, 36)), np.empty((N, 36), dtype=np.float32)
    inv, scale, valid = np.empty((N, 3, 3)), np.empty(N), np.empty(N, dtype=bool)
    space_margin.prepare_rows(*fields, 0, g, g32, inv, scale, valid)
    return g, inv, scale, valid


def _columns(d):
    def column(name, *index):
        return np.asarray(getattr(d, name), float)[(slice(None),) + index]

    with np.errstate(all="ignore"):
        return space_columns.prepare(column, np)


@pytest.mark.parametrize("name", ["euclidean/power-0.5-3d.yaml", "euclidean/sq-euclid-3d.yaml"])
def test_column_algebra_is_the_per_pair_algebra(name):
    cost = load_cost(CATALOG / name)
    s = sample_pairs(cost.domain, 3, 3, 400, 3)
    d = cost.derivatives(backend="sympy", order=4)(s.xs, s.ys)
    g, inv, scale, valid = _per_pair(d)
    p = _columns(d)
    assert np.array_equal(np.asarray(p.valid), valid) and valid.all()
    G = np.stack(p.g, axis=1)
    size = np.abs(g).max(initial=0.0)
    np.testing.assert_allclose(G, g, rtol=0, atol=1e-13 * max(size, 1e-300))
    np.testing.assert_allclose(np.stack(p.inv, axis=1).reshape(-1, 3, 3), inv, rtol=1e-13, atol=1e-15)
    np.testing.assert_allclose(p.scale, scale, rtol=1e-13)


def test_singular_and_non_finite_rows_are_invalid_in_both():
    rng = np.random.default_rng(5)
    N = 64
    dxy = rng.standard_normal((N, 3, 3))
    dxy[0] = 0.0                                   # zero matrix
    dxy[1, 2] = dxy[1, 0] + dxy[1, 1]              # rank 2
    dxy[2, 1, 1] = np.nan                          # not finite
    sym = rng.standard_normal((N, 3, 3, 3))
    from costcheck.derivatives.fields import Derivatives

    d = Derivatives(value=np.zeros(N), dxy=dxy, dxxy=sym, dxyy=sym.transpose(0, 3, 1, 2).copy(),
                    dxxyy=rng.standard_normal((N, 3, 3, 3, 3)))
    _, _, _, valid = _per_pair(d)
    p = _columns(d)
    assert np.array_equal(np.asarray(p.valid), valid) and not valid[:3].any() and valid[3:].all()
    assert all(np.all(np.asarray(c)[~valid] == 0) for c in p.g)  # finite zeros for the later programs


def _random_packed(count, seed):
    rng = np.random.default_rng(seed)
    G = rng.standard_normal((count, 3, 3, 3, 3))
    return biquadratic.pack(G)


def _column_minimum(g, seed_iterations=2, iterations=5):
    """What the jitted programs compute, on numpy: the scan's two seeds, Newton from both, the
    better one refined, and the convergence test at the end."""
    cols = tuple(g[:, k] for k in range(36))
    size = orthogonal_search.largest_entry(cols)
    packed = orthogonal_search.seeds(cols)
    runs = []
    for index in orthogonal_search.split(packed):
        xi = orthogonal_search.direction(index)
        eta = orthogonal_search.exact_eta(cols, xi)
        state = (xi, eta, orthogonal_search.value(cols, xi, eta), np.zeros(len(size)), np.zeros(len(size), bool))
        for _ in range(seed_iterations):
            state = orthogonal_search.newton_step(cols, size, state)
        runs.append(state)
    better = runs[1][2] < runs[0][2]
    state = tuple(tuple(np.where(better, v, u) for u, v in zip(a, b)) if isinstance(a, tuple) else np.where(better, b, a)
                  for a, b in zip(*runs))
    for _ in range(iterations - seed_iterations):
        state = orthogonal_search.newton_step(cols, size, state)
    done = orthogonal_search.newton_step(cols, size, state)[4]
    return state[2], np.stack(state[0], axis=1), np.stack(state[1], axis=1), done, size


def test_column_minimum_matches_the_per_pair_minimum_on_random_tensors():
    g = _random_packed(400, 11)
    with np.errstate(all="ignore"):
        f, xi, eta, done, size = _column_minimum(g)
    raw, _, _ = biquadratic.minimise_packed(g)
    # converged rows: the same minimum to 1e-12·max|G| (both are local minima to rounding from
    # seeds of the same scan; a row at a different local minimum would differ by far more)
    assert done.mean() > 0.9
    np.testing.assert_allclose(f[done], raw[done], rtol=0, atol=1e-12 * size[done].max())
    # every value is the form at unit, orthogonal vectors, so never below the true minimum
    np.testing.assert_allclose(np.linalg.norm(xi, axis=1), 1, atol=1e-14)
    np.testing.assert_allclose(np.linalg.norm(eta, axis=1), 1, atol=1e-14)
    assert np.abs(np.sum(xi * eta, axis=1)).max() < 1e-14


def test_value_is_the_form_at_the_returned_vectors_in_mpmath():
    G = np.random.default_rng(2).standard_normal((6, 3, 3, 3, 3))
    g = biquadratic.pack(G)
    f, xi, eta, _, _ = _column_minimum(g)
    Gs = 0.25 * (G + G.transpose(0, 2, 1, 3, 4) + G.transpose(0, 1, 2, 4, 3) + G.transpose(0, 2, 1, 4, 3))
    with mpmath.workdps(40):
        for n in range(len(f)):
            exact = mpmath.fsum(mpmath.mpf(Gs[n, i, j, a, b]) * mpmath.mpf(xi[n, i]) * mpmath.mpf(xi[n, j])
                                * mpmath.mpf(eta[n, a]) * mpmath.mpf(eta[n, b])
                                for i in range(3) for j in range(3) for a in range(3) for b in range(3))
            assert abs(float(exact) - f[n]) <= 1e-14 * np.abs(G[n]).max()


def test_zero_tensor_is_converged_at_zero():
    f, _, _, done, _ = _column_minimum(np.zeros((8, 36)))
    assert np.all(f == 0) and done.all()


@pytest.mark.skipif(not os.environ.get("COSTCHECK_TEST_JIT_N3"),
                    reason="compiles four XLA programs (about a minute cold); set COSTCHECK_TEST_JIT_N3=1")
@pytest.mark.parametrize("name", ["euclidean/power-0.5-3d.yaml", "euclidean/sq-euclid-3d.yaml"])
def test_jitted_kernel_matches_the_per_pair_path(name):
    from costcheck.numerics.curvature.margins import a3w_margin
    from costcheck.numerics.curvature.n3 import fused_margin

    cost = load_cost(CATALOG / name)
    s = sample_pairs(cost.domain, 3, 3, 5000, 9)
    m = fused_margin.a3w_margin(cost, s.xs, s.ys, chunk=4096)  # two blocks, the second padded
    ref = a3w_margin(cost.derivatives(backend="sympy", order=4)(s.xs, s.ys))
    assert np.array_equal(m.valid, ref.valid)
    np.testing.assert_allclose(m.raw, ref.raw, rtol=0, atol=1e-12 * np.nanmax(np.abs(ref.normaliser)))
    np.testing.assert_allclose(m.rel, ref.rel, rtol=1e-7, atol=1e-15)
