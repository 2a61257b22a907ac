"""The n = 3 orthogonal-pair minimum (costcheck.numerics.curvature.n3.biquadratic) against independent references.

The references use only the older machinery of costcheck.numerics.curvature.margins (a dense direction scan
with LAPACK eigenvalues on ξ^⊥, then its own sphere descent), not the code under test.  The
tolerance 1e-6 · max|G| is the accuracy the A3w verdicts need (common practice for a margin that
is compared with rounding-level thresholds far below the violations it reports).
"""

from pathlib import Path

import numpy as np
import pytest

from costcheck.numerics.curvature import algebra, margins
from costcheck.numerics.curvature.n3 import biquadratic
from costcheck.numerics.sampling import sample_pairs
from costcheck.spec.loader import load_cost

CATALOG = Path(__file__).resolve().parent.parent / "catalog"


def _symmetric(G):
    G = 0.5 * (G + np.swapaxes(G, 1, 2))
    return 0.5 * (G + np.swapaxes(G, 3, 4))


def _random_g(count, seed):
    # invented test data: standard normal tensors, symmetrised as G is
    return _symmetric(np.random.default_rng(seed).standard_normal((count, 3, 3, 3, 3)))


def _catalog_g(name, count, seed):
    cost = load_cost(CATALOG / name)
    s = sample_pairs(cost.domain, cost.n, cost.m, count, seed)
    _, _, G, _, valid = algebra.prepare(cost.derivatives(backend="sympy", order=4)(s.xs, s.ys))
    assert valid.all()
    return G


def _reference(G, directions=3000, steps=80):
    """Dense scan (exact η per ξ by LAPACK) and 80 sphere-descent steps from the 3 best directions."""
    out = []
    for b in range(0, G.shape[0], 40):
        part = G[b:b + 40]
        raw, _, _ = algebra.polished_scan(part, np.ones(part.shape[0], bool), True,
                                          algebra.sphere_directions(3, directions), steps)
        out.append(raw)
    return np.concatenate(out)


def _scale(G):
    return np.abs(G).reshape(G.shape[0], -1).max(axis=1)


def _form(G, xi, eta):
    return np.einsum("nijab,ni,nj,na,nb->n", G, xi, xi, eta, eta)


def test_model_matches_finite_differences():
    # gradient and Hessian of ω ↦ G(e^{[ω]×}ξ, ., e^{[ω]×}η, .) against central differences
    G = _random_g(1, 11)
    rng = np.random.default_rng(5)
    xi = rng.standard_normal(3)
    xi /= np.linalg.norm(xi)
    eta = rng.standard_normal(3)
    eta -= (eta @ xi) * xi
    eta /= np.linalg.norm(eta)
    g6 = biquadratic.pack(G)[0].reshape(6, 6)  # the compiled helpers run from Python too
    B = biquadratic._quadratic_in_second(g6, biquadratic._square(tuple(eta)))
    f, g, H = biquadratic.newton_model(g6, tuple(xi), tuple(eta), B)

    def value(w):
        theta = np.linalg.norm(w)
        k = w / theta if theta > 0 else w
        rot = lambda v: v * np.cos(theta) + np.cross(k, v) * np.sin(theta) + k * (k @ v) * (1 - np.cos(theta))
        return _form(G, rot(xi)[None], rot(eta)[None])[0]

    h, E = 1e-4, np.eye(3)
    grad = [(value(h * E[k]) - value(-h * E[k])) / (2 * h) for k in range(3)]
    hess = [[(value(h * (E[k] + E[l])) - value(h * (E[k] - E[l])) - value(h * (E[l] - E[k]))
              + value(-h * (E[k] + E[l]))) / (4 * h * h) for l in range(3)] for k in range(3)]
    model = [[2 * H[biquadratic.UNPACK[k][l]] for l in range(3)] for k in range(3)]
    assert f == pytest.approx(value(np.zeros(3)), abs=1e-14)
    np.testing.assert_allclose(np.ravel(g), grad, atol=1e-7)
    np.testing.assert_allclose(model, hess, atol=1e-6)


@pytest.mark.parametrize("kind", ["random", "power-0.5-3d"])
def test_minimum_matches_dense_reference(kind):
    G = _random_g(160, 3) if kind == "random" else _catalog_g("euclidean/power-0.5-3d.yaml", 160, 4)
    raw, xi, eta = biquadratic.orthogonal_biquadratic_min(G)
    ref = _reference(G)
    gap = (raw - ref) / _scale(G)
    assert gap.max() <= 1e-6, f"worst gap {gap.max():.2e}"
    # the returned value is the form at the returned vectors, which are unit and orthogonal
    np.testing.assert_allclose(np.linalg.norm(xi, axis=1), 1.0, atol=1e-14)
    np.testing.assert_allclose(np.linalg.norm(eta, axis=1), 1.0, atol=1e-14)
    assert np.abs(np.sum(xi * eta, axis=1)).max() <= 1e-14
    np.testing.assert_allclose(raw, _form(G, xi, eta), atol=1e-13 * _scale(G).max())


@pytest.mark.parametrize("kind", ["random", "power-0.5-3d"])
def test_stopping_early_loses_nothing_above_rounding(kind):
    # a pair stops once the Newton step's predicted decrease is below rounding; forty iterations
    # (twenty from every seed) must find nothing lower beyond rounding of the form's value
    G = _random_g(400, 13) if kind == "random" else _catalog_g("euclidean/power-0.5-3d.yaml", 400, 6)
    raw, _, _ = biquadratic.orthogonal_biquadratic_min(G)
    longer, _, _ = biquadratic.orthogonal_biquadratic_min(G, iterations=40, seed_iterations=20)
    assert ((raw - longer) / _scale(G)).max() <= 1e-13


def test_beats_the_older_descent_on_random_tensors():
    # the scan + SO(3) Newton must be no worse than the 96-direction scan + 20 descent steps
    G = _random_g(160, 8)
    raw, _, _ = biquadratic.orthogonal_biquadratic_min(G)
    older = np.concatenate([algebra.polished_scan(G[b:b + 40], np.ones(40, bool), True,
                                                  algebra.sphere_directions(3, 96), 20)[0] for b in range(0, 160, 40)])
    gap = (raw - older) / _scale(G)
    assert gap.max() <= 1e-12
    assert gap.mean() < 0


def test_non_finite_zero_and_flat_inputs():
    G = _random_g(3, 1)
    assert np.all(np.isfinite(biquadratic.orthogonal_biquadratic_min(G)[0]))
    bad = G.copy()
    bad[1, 0, 0, 0, 0] = np.nan
    raw, _, _ = biquadratic.orthogonal_biquadratic_min(bad)
    assert np.isnan(raw[1]) and np.isfinite(raw[[0, 2]]).all()
    zero = biquadratic.orthogonal_biquadratic_min(np.zeros((4, 3, 3, 3, 3)))
    assert np.all(zero[0] == 0) and np.all(np.isfinite(zero[1]))
    # squared distance in R^3: the MTW tensor vanishes, so the margin is exactly 0 (MTW 2005)
    cost = load_cost(CATALOG / "euclidean" / "sq-euclid-3d.yaml")
    s = sample_pairs(cost.domain, cost.n, cost.m, 50, 2)
    m = margins.a3w_margin(cost.derivatives(backend="sympy", order=4)(s.xs, s.ys))
    assert np.all(m.raw == 0)
    with pytest.raises(ValueError):
        biquadratic.orthogonal_biquadratic_min(np.zeros((2, 4, 4, 4, 4)))
