"""The compiled n = 3 margin (costcheck.numerics.curvature.n3.space_margin) against the numpy route.

The numpy route is the older, independent code of costcheck.numerics.curvature.margins: an SVD per pair for
the singularity test, numpy's inverse, and einsum/batched products for T and G (Ma, Trudinger &
Wang, Arch. Ration. Mech. Anal. 177 (2005) 151–183).  Both feed the same orthogonal-pair minimum
(costcheck.numerics.curvature.n3.biquadratic), so these tests hold the compiled algebra to the numpy one.
"""

from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st
from strategies import costs, points_in

from costcheck.derivatives.fields import Derivatives
from costcheck.numerics.curvature import algebra
from costcheck.numerics.curvature.n3 import biquadratic, space_margin
from costcheck.numerics.sampling import sample_pairs
from costcheck.spec.loader import load_cost

CATALOG = Path(__file__).resolve().parent.parent / "catalog"


def _numpy_route(d):
    with np.errstate(all="ignore"):  # the non-finite fields of the test below
        T, inv, G, normalising, valid = algebra.prepare(d)
    raw, xi, eta = biquadratic.orthogonal_biquadratic_min(G)
    return algebra.finish(raw, xi, eta, normalising, valid)


def _assert_same(m, ref):
    assert np.array_equal(m.valid, ref.valid)
    v = ref.valid
    # the same minimum to rounding; the minimiser, and so the normaliser scale·|M⁻¹η|² taken
    # there, only to about √ε (the value is flat to second order around it, and steps are
    # kept only where they lower it), so the scale-free margin agrees to 1e-7 relative
    np.testing.assert_allclose(m.raw[v], ref.raw[v], rtol=0, atol=1e-12 * np.abs(ref.normaliser[v]).max(initial=0.0))
    np.testing.assert_allclose(m.normaliser[v], ref.normaliser[v], rtol=1e-7)
    np.testing.assert_allclose(m.rel[v], ref.rel[v], rtol=1e-7, atol=1e-15)
    assert np.all(np.isnan(m.raw[~v])) and np.all(np.isnan(m.rel[~v]))


@pytest.mark.parametrize("name", ["euclidean/power-0.5-3d.yaml", "euclidean/sq-euclid-3d.yaml"])
@pytest.mark.parametrize("backend", ["sympy", "jax"])
def test_catalog_costs_match_the_numpy_route(name, backend):
    # both backends: the sympy fields arrive pairs-last (read in place), JAX's pairs-first (copied)
    cost = load_cost(CATALOG / name)
    s = sample_pairs(cost.domain, cost.n, cost.m, 3000, 7)
    d = cost.derivatives(backend=backend, order=4)(s.xs, s.ys)
    m = space_margin.a3w_margin(d)
    _assert_same(m, _numpy_route(d))
    if name.startswith("euclidean/sq"):  # |x − y|²/2: T ≡ 0, so the margin is exactly 0 (MTW 2005)
        assert np.all(m.raw == 0)


@settings(max_examples=8, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


@given(data=st.data())
def test_random_costs_match_the_numpy_route(data):
    cost = data.draw(costs(n=3, m=3, max_depth=1))
    xs, ys = data.draw(points_in(cost, count=16))
    d = cost.derivatives(order=4)(xs, ys)
    _assert_same(space_margin.a3w_margin(d), _numpy_route(d))


def _fields(dxy, seed=0):
    """Derivative fields with the given mixed Hessians and random (symmetric) higher entries."""
    rng = np.random.default_rng(seed)
    count = dxy.shape[0]
    dxxy = rng.standard_normal((count, 3, 3, 3))
    dxyy = rng.standard_normal((count, 3, 3, 3))
    d4 = rng.standard_normal((count, 3, 3, 3, 3))
    dxxy = 0.5 * (dxxy + dxxy.transpose(0, 2, 1, 3))
    dxyy = 0.5 * (dxyy + dxyy.transpose(0, 1, 3, 2))
    d4 = 0.5 * (d4 + d4.transpose(0, 2, 1, 3, 4))
    d4 = 0.5 * (d4 + d4.transpose(0, 1, 2, 4, 3))
    return Derivatives(value=np.zeros(count), dxy=dxy, dxxy=dxxy, dxyy=dxyy, dxxyy=d4)


def test_singular_test_agrees_with_singular_values():
    # M = U diag(1, 1e-3, σ) Vᵀ across the threshold σ_min/σ_max = 1e-12, at three magnitudes
    # (the other fields are of order 1, so T's terms reach 1e103 at the small one, not overflow);
    # the reference is numpy's SVD (LAPACK), as the numpy route uses
    rng = np.random.default_rng(3)
    sigmas = [1e-6, 1e-10, 1e-11, 3e-12, 1.2e-12, 8e-13, 3e-13, 1e-14, 1e-17, 0.0]
    mats = []
    for magnitude in (1e-100, 1.0, 1e100):
        for sigma in sigmas:
            U, _ = np.linalg.qr(rng.standard_normal((3, 3)))
            V, _ = np.linalg.qr(rng.standard_normal((3, 3)))
            mats.append(magnitude * (U * np.array([1.0, 1e-3, sigma])) @ V.T)
    dxy = np.array(mats)
    sv = np.linalg.svd(dxy, compute_uv=False)
    expected = sv[:, -1] > algebra.SINGULAR_RCOND * sv[:, 0]
    m = space_margin.a3w_margin(_fields(dxy))
    assert np.array_equal(m.valid, expected)
    assert expected.sum() == 3 * 5 and (~expected).sum() == 3 * 5  # both sides of the threshold tested


def test_non_finite_and_zero_fields_are_not_valid():
    dxy = np.repeat(np.eye(3)[None] + 0.1, 6, axis=0)
    d = _fields(dxy, 4)
    d.dxy[1, 0, 2] = np.nan
    d.dxy[2] = 0.0
    d.dxxy[3, 1, 1, 0] = np.inf
    d.dxyy[4, 0, 2, 2] = np.nan
    d.dxxyy[5, 2, 2, 1, 1] = -np.inf
    m = space_margin.a3w_margin(d)
    assert m.valid.tolist() == [True, False, False, False, False, False]
    assert np.isfinite(m.rel[0]) and np.all(np.isnan(m.rel[1:])) and np.all(np.isnan(m.xi[1:]))
    _assert_same(m, _numpy_route(d))


def test_blocks_cover_the_batch_in_balanced_shares():
    for count in [0, 1, 5, space_margin.SHARED_FROM - 1, space_margin.SHARED_FROM, 4097, 5000, 20000, 123457]:
        spans = space_margin.blocks(count)
        assert [b for _, b in spans[:-1]] == [a for a, _ in spans[1:]]  # contiguous
        assert (spans[0][0], spans[-1][1]) == (0, count) if count else spans == []
        sizes = [b - a for a, b in spans]
        assert all(0 < s <= space_margin.BLOCK for s in sizes)
        if count >= space_margin.SHARED_FROM:
            assert len(spans) % space_margin.THREADS == 0 and max(sizes) - min(sizes) <= 1
        else:
            assert len(spans) <= 1


def test_threads_change_no_result(monkeypatch):
    # every pair is computed on its own, so blocks on two threads give the one-block results; not
    # to the bit: BLAS rounds the scan's float32 product differently at a block's last rows, which
    # moves a Newton seed by rounding
    cost = load_cost(CATALOG / "euclidean/power-0.5-3d.yaml")
    s = sample_pairs(cost.domain, cost.n, cost.m, 5000, 2)
    d = cost.derivatives(order=4)(s.xs, s.ys)
    shared = space_margin.a3w_margin(d)
    assert len(space_margin.blocks(5000)) > 1
    monkeypatch.setattr(space_margin, "SHARED_FROM", 10**9)
    alone = space_margin.a3w_margin(d)
    np.testing.assert_array_equal(shared.valid, alone.valid)
    np.testing.assert_allclose(shared.raw, alone.raw, rtol=1e-14)
    np.testing.assert_allclose(shared.rel, alone.rel, rtol=1e-7)


def test_compiled_code_cache_follows_every_kernel_module(monkeypatch, tmp_path):
    from costcheck.numerics.curvature.n3 import compiled

    # every module that compiles with compiled.kernel/inline is in the digest that names the
    # cache folder (numba itself checks only the file a cached function is defined in)
    here = Path(compiled.__file__).resolve().parent
    users = {p.name for p in here.glob("*.py") if "from .compiled import" in p.read_text()}
    assert users | {"compiled.py"} == set(compiled.KERNEL_MODULES)

    try:
        monkeypatch.setenv("COSTCHECK_NUMBA_CACHE", "0")
        compiled.cache_directory.cache_clear()
        assert compiled.cache_directory() is None
        monkeypatch.setenv("COSTCHECK_NUMBA_CACHE", str(tmp_path))
        compiled.cache_directory.cache_clear()
        first = compiled.cache_directory()
        assert Path(first).parent == tmp_path and Path(first).is_dir()
        # another text of a kernel module: another folder
        copy = tmp_path / "copy"
        copy.mkdir()
        for name in compiled.KERNEL_MODULES:
            (copy / name).write_bytes((here / name).read_bytes())
        (copy / "small3.py").write_text((here / "small3.py").read_text() + "\n# changed\n")
        monkeypatch.setattr(compiled, "__file__", str(copy / "compiled.py"))
        compiled.cache_directory.cache_clear()
        assert compiled.cache_directory() not in (None, first)
    finally:
        compiled.cache_directory.cache_clear()
