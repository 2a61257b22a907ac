"""The certified, eigenvalue-free minimum of the n = 2 quartic S(θ), and the columnwise plane margin.

References used here are computed in the tests themselves: a dense angle grid (20,001 angles)
and the companion-matrix route (all critical points, LAPACK eigenvalues).
"""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from hypothesis.extra.numpy import arrays

import costcheck
from costcheck.numerics.curvature import algebra, margins
from costcheck.numerics.curvature.n2 import plane_margin, quartic

GRID = np.linspace(0.0, np.pi, 20001)


def _dense_minimum(p):
    c, s = np.cos(GRID), np.sin(GRID)
    return np.min(sum(p[:, q, None] * c ** (4 - q) * s**q for q in range(5)), axis=1)


def _value_at(p, cos, sin):
    return sum(p[:, q] * cos ** (4 - q) * sin**q for q in range(5))


def _families(rng, count=3000):
    p = rng.standard_normal((count, 5))
    p[:200, 3] = 0.0                                  # the tan θ quartic drops a degree
    p[200:300] = [1.0, 0.0, 0.0, 0.0, 1.0]            # cos⁴ + sin⁴: four minima of equal value
    p[300:400] = [1.0, 0.0, 2.0, 0.0, 1.0]            # S ≡ 1
    p[400:500] = 0.0                                  # S ≡ 0
    p[500:600] = [1.0, 0.0, 2.0, 0.0, 1.0] + 1e-15 * rng.standard_normal((100, 5))  # S ≡ 1 up to rounding
    p[600:700] *= 1e-200                              # tiny scale
    p[700:800, 1:4] = 0.0                             # p0 cos⁴ + p4 sin⁴
    return p


def test_exact_minimum_matches_dense_grid_and_eigenvalues():
    p = _families(np.random.default_rng(1))
    found = quartic.exact_minimum(p)
    slow = quartic.minimum_by_eigenvalues(p)
    reference = np.minimum(_dense_minimum(p), slow.value)
    scale = np.max(np.abs(p), axis=1)
    scale = np.where(scale > 0, scale, 1.0)
    assert np.all(np.abs(found.value - reference) <= 1e-12 * scale)
    # the value is S at the returned unit vector: a real angle, never below the true minimum
    assert np.allclose(found.cos**2 + found.sin**2, 1.0, atol=1e-14)
    assert np.all(np.abs(_value_at(p, found.cos, found.sin) - found.value) <= 1e-13 * scale)


def test_the_certificate_is_honest_and_mostly_granted():
    # rows the fast path certifies must be exact without any help from the eigenvalue route
    p = _families(np.random.default_rng(2))
    fast = quartic.minimum(p)
    reference = np.minimum(_dense_minimum(p), quartic.minimum_by_eigenvalues(p).value)
    scale = np.maximum(np.max(np.abs(p), axis=1), 1e-300)
    ok = fast.certified
    assert np.all(np.abs(fast.value[ok] - reference[ok]) <= 1e-12 * scale[ok])
    assert np.all(fast.value >= reference - 1e-12 * scale)  # uncertified rows: still S at a real angle
    assert ok[300:500].all()                                   # exactly constant: certified
    assert np.mean(ok[800:]) > 0.95                            # random quartics: measured ~0.97


@settings(max_examples=60, deadline=None)
@given(arrays(np.float64, (16, 5), elements=st.floats(-1e3, 1e3, allow_subnormal=False)))
def test_certified_rows_are_exact_for_arbitrary_coefficients(p):
    fast = quartic.minimum(p)
    reference = np.minimum(_dense_minimum(p), quartic.minimum_by_eigenvalues(p).value)
    scale = np.max(np.abs(p), axis=1) + 1e-300
    ok = fast.certified
    assert np.all(np.abs(fast.value[ok] - reference[ok]) <= 1e-11 * scale[ok])
    patched = quartic.exact_minimum(p)
    assert np.all(np.abs(patched.value - reference) <= 1e-9 * scale)


def test_jitted_stages_match_numpy():
    pytest.importorskip("jax")
    from costcheck.derivatives.jax_backend import jax_modules

    jax, jnp = jax_modules()
    p = _families(np.random.default_rng(3), 1024)
    q = jnp.asarray(p)
    packed = jax.jit(lambda q: quartic.bracket(q, jnp))(q)
    found = jax.jit(lambda q, s: quartic.roots(q, s, jnp))(q, packed)
    out = jax.jit(lambda q, s, f: quartic.choose(q, s, f, jnp))(q, packed, found)
    ref = quartic.minimum(p)
    scale = np.max(np.abs(p), axis=1)
    assert np.mean(np.asarray(out.certified) == ref.certified) > 0.99  # XLA may round differently
    np.testing.assert_allclose(np.asarray(out.value), ref.value, rtol=0, atol=1e-12)
    # the minimiser may differ where S is flat (constant up to rounding); it must attain the value
    attained = _value_at(p, np.asarray(out.cos), np.asarray(out.sin))
    assert np.all(np.abs(attained - np.asarray(out.value)) <= 1e-12 * scale)


def test_plane_margin_matches_the_tensor_written_out_on_catalog_costs():
    # the columnwise algebra against the general (N, n, n, n, n) tensor code and a dense angle grid
    for name in ("euclidean/power-0.5.yaml", "sphere/sphere-dist-sq.yaml", "euclidean/power-3.yaml"):
        cost = costcheck.load(f"catalog/{name}")
        from costcheck.numerics.sampling import sample_pairs

        s = sample_pairs(cost.domain, 2, 2, 300, 5)
        d = cost.derivatives(order=4)(s.xs, s.ys)
        m = plane_margin.a3w_margin(d)
        T, scale = algebra.mtw_tensor(d)
        inv = np.linalg.inv(d.dxy)
        xi = np.stack([np.cos(GRID[::20]), np.sin(GRID[::20])], axis=1)
        eta = np.stack([-xi[:, 1], xi[:, 0]], axis=1)
        eta_p = np.einsum("nkl,tl->ntk", inv, eta)
        grid = np.einsum("nijkl,ti,tj,ntk,ntl->nt", T, xi, xi, eta_p, eta_p).min(axis=1)
        ok = m.valid
        assert ok.mean() > 0.9
        size = scale[ok] * np.max(np.sum(eta_p[ok] ** 2, axis=2), axis=1)
        assert np.all(m.raw[ok] <= grid[ok] + 1e-12 * size)          # never above the grid
        assert np.all(m.raw[ok] >= grid[ok] - 1e-5 * size)           # and close to it (1,001 angles)
        attained = margins.form_at(d, m.xi, m.eta)
        assert np.allclose(attained[ok], m.raw[ok], rtol=1e-10, atol=1e-12 * np.max(size))


@pytest.mark.parametrize("count", [1, 4095, 4096, 4097, 200_000, 3 * (1 << 15), 1_000_001])
def test_kernel_blocks_cover_the_batch_with_little_padding_and_few_shapes(count):
    from costcheck.numerics.curvature.n2 import fused_margin as fm

    spans = fm.blocks(count)
    assert [b for b, _, _ in spans] == list(np.cumsum([0] + [size for _, _, size in spans[:-1]]))
    assert sum(rows for _, rows, _ in spans) == count
    assert all(rows == size for _, rows, size in spans[:-1])  # only the last block is padded
    assert spans[-1][2] - spans[-1][1] < fm.SMALLEST_BLOCK
    sizes = {size for _, _, size in spans}
    assert all(s & (s - 1) == 0 and fm.SMALLEST_BLOCK <= s <= fm.CHUNK for s in sizes)


def test_fused_kernel_matches_the_numpy_route_and_the_check_uses_it(monkeypatch):
    pytest.importorskip("jax")
    from costcheck.numerics.curvature.n2 import fused_margin
    from costcheck.numerics.sampling import sample_pairs

    cost = costcheck.load("catalog/sphere/sphere-dist-sq.yaml")
    s = sample_pairs(cost.domain, 2, 2, 700, 3)
    fused = fused_margin.a3w_margin(cost, s.xs, s.ys, chunk=256)  # three chunks, the last one padded
    ref = plane_margin.a3w_margin(cost.derivatives(order=4)(s.xs, s.ys))
    np.testing.assert_array_equal(fused.valid, ref.valid)
    ok = ref.valid
    np.testing.assert_allclose(fused.raw[ok], ref.raw[ok], rtol=0, atol=1e-12 * np.max(ref.normaliser[ok]))
    np.testing.assert_allclose(fused.rel[ok], ref.rel[ok], rtol=0, atol=1e-11)
    # a sample above the threshold runs on the kernel, with the same verdict and margin
    plain = costcheck.check(cost, budget=512, conditions=["mtw"], prove=False).verdicts["mtw"]
    calls = []
    original = fused_margin.a3w_margin
    monkeypatch.setattr(fused_margin, "WORTHWHILE_PAIRS", 256)
    monkeypatch.setattr(fused_margin, "a3w_margin", lambda *a, **k: calls.append(1) or original(*a, **k))
    kernel = costcheck.check(cost, budget=512, conditions=["mtw"], prove=False).verdicts["mtw"]
    assert calls
    assert plain.verdict == kernel.verdict and kernel.value == pytest.approx(plain.value, rel=1e-9, abs=1e-12)
