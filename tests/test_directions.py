"""Tests for the search directions `LBFGS` and `NonlinearCG` (and their protocol).

Quadratic test problems are invented here: f(x) = ½xᵀAx − bᵀx with A symmetric
positive definite built from a seeded random rotation and chosen eigenvalues; the
exact minimiser is A⁻¹b.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from _problems import random_spd
from linestep import Armijo, Wolfe, descend, stopping
from linestep.bench.problems import get_problem
from linestep.directions import (
    LBFGS,
    POWELL_ORTHOGONALITY,
    Direction,
    NonlinearCG,
    SteepestDescent,
    _two_loop,
)

# ----------------------------------------------------------------------------- helpers


def spd_quadratic(n, *, seed=0, condition=100.0):
    """A, b of an invented strictly convex quadratic with eigenvalues in [1, condition]."""
    rng = np.random.default_rng(seed)
    A = random_spd(rng, n, math.log10(condition))
    A = (A + A.T) / 2  # exactly symmetric
    return A, rng.standard_normal(n)


def exact_line_search_run(direction, A, b, x0, iterations):
    """Iterates of x ← x + t·d with the exact step t = −gᵀd / dᵀAd (N&W eq. 3.55)."""
    x = x0.copy()
    iterates = [x]
    for _ in range(iterations):
        g = A @ x - b
        if not g.any():
            break
        d = direction(x, g)
        t = -(g @ d) / (d @ A @ d)
        x = x + t * d
        iterates.append(x)
    return np.array(iterates)


def linear_cg_run(A, b, x0, iterations):
    """Linear conjugate gradients (N&W Alg. 5.2), written out for the comparison."""
    x = x0.copy()
    r = A @ x - b
    p = -r
    iterates = [x]
    for _ in range(iterations):
        alpha = (r @ r) / (p @ A @ p)
        x = x + alpha * p
        r_new = r + alpha * (A @ p)
        p = -r_new + (r_new @ r_new) / (r @ r) * p
        r = r_new
        iterates.append(x)
    return np.array(iterates)


def explicit_bfgs_inverse(pairs, gamma):
    """H from H0 = γI and the direct update H ← (I − ρsyᵀ)H(I − ρysᵀ) + ρssᵀ (N&W eq. 6.17)."""
    n = pairs[0][0].size
    H = gamma * np.eye(n)
    for s, y in pairs:
        rho = 1.0 / (s @ y)
        V = np.eye(n) - rho * np.outer(y, s)
        H = V.T @ H @ V + rho * np.outer(s, s)
    return H


def feed(direction, points, gradients):
    """Call `direction` on each (x, g) in turn; return the last direction."""
    d = None
    for x, g in zip(points, gradients, strict=True):
        d = direction(x, g)
    return d


# --------------------------------------------------------------------- protocol, repr


@pytest.mark.parametrize("direction", [LBFGS(), LBFGS(3, curvature_tolerance=0.0),
                                       NonlinearCG(), NonlinearCG("pr+", restart_every=7),
                                       NonlinearCG(eta=0.5, orthogonality_restart=0.2)])
def test_repr_rebuilds_the_call(direction):
    rebuilt = eval(repr(direction), {"LBFGS": LBFGS, "NonlinearCG": NonlinearCG})
    assert repr(rebuilt) == repr(direction)
    assert isinstance(direction, Direction)


def test_default_reprs():
    assert repr(LBFGS()) == "LBFGS(memory=10, curvature_tolerance=None, scale_first=True)"
    assert repr(NonlinearCG()) == (
        "NonlinearCG(beta='hager_zhang', eta=0.01, restart_every=None, "
        "orthogonality_restart=None)"
    )


@pytest.mark.parametrize("direction", [LBFGS(), NonlinearCG()])
def test_call_argument_errors(direction):
    with pytest.raises(ValueError, match="`gradient` must have the shape of `x`"):
        direction(np.zeros(3), np.zeros(2))
    direction(np.zeros(3), np.ones(3))
    with pytest.raises(ValueError, match=r"call reset\(\)"):
        direction(np.zeros(4), np.ones(4))
    direction.reset()
    direction(np.zeros(4), np.ones(4))
    with pytest.raises(TypeError, match="real arrays"):
        type(direction)()(np.zeros(2, dtype=complex), np.ones(2))


@pytest.mark.parametrize("direction", [LBFGS(scale_first=False), NonlinearCG(),
                                       NonlinearCG("pr+")])
def test_first_call_is_steepest_descent_and_not_a_restart(direction):
    g = np.array([3.0, -1.0, 2.0])
    np.testing.assert_array_equal(direction(np.ones(3), g), -g)
    assert direction.restarted is False


def test_lbfgs_scales_its_first_direction_to_at_most_unit_length():
    # d = −g·min(1, 1/‖g‖₂) while no pairs are stored (Liu & Nocedal 1989's first step).
    g = np.array([3.0, -1.0, 2.0])
    np.testing.assert_allclose(LBFGS()(np.ones(3), g), -g / np.sqrt(14.0), rtol=1e-15)
    small = np.array([0.3, -0.4])
    np.testing.assert_array_equal(LBFGS()(np.ones(2), small), -small)


@pytest.mark.parametrize("direction", [LBFGS(), NonlinearCG(), NonlinearCG("pr+")])
def test_zero_gradient_gives_zero_direction_without_restart(direction):
    A, b = spd_quadratic(3)
    direction(np.zeros(3), -b)
    x = np.linalg.solve(A, b)
    d = direction(x, np.zeros(3))
    np.testing.assert_array_equal(d, np.zeros(3))
    assert direction.restarted is False


@pytest.mark.parametrize("make", [lambda: LBFGS(scale_first=False), NonlinearCG,
                                  lambda: NonlinearCG("pr+")])
def test_reset_forgets_everything(make):
    A, b = spd_quadratic(4, seed=3)
    direction = make()
    points = [np.zeros(4), np.full(4, 0.1), np.full(4, -0.2)]
    feed(direction, points, [A @ x - b for x in points])
    direction.reset()
    g = A @ points[-1] - b
    np.testing.assert_array_equal(direction(points[-1], g), -g)
    assert direction.restarted is False
    if isinstance(direction, LBFGS):
        assert direction.stored == 0 and direction.skipped == 0


# ----------------------------------------------------------- L-BFGS: the two-loop product


@given(n=st.integers(1, 6), pairs=st.integers(1, 9), memory=st.integers(1, 8),
       seed=st.integers(0, 2**32 - 1))
def test_two_loop_matches_explicit_bfgs_product(n, pairs, memory, seed):
    # The two-loop recursion (N&W Alg. 7.4) computes H·g for the matrix of N&W eq. 7.19,
    # i.e. the direct update eq. 6.17 applied to H0 = γI (eq. 7.20) with the newest m pairs.
    A, b = spd_quadratic(n, seed=seed % 1000, condition=10.0)
    rng = np.random.default_rng(seed)
    points = list(rng.standard_normal((pairs + 1, n)))
    gradients = [A @ x - b for x in points]
    direction = LBFGS(memory)
    d = feed(direction, points, gradients)
    kept = [(points[i + 1] - points[i], gradients[i + 1] - gradients[i])
            for i in range(pairs)][-memory:]
    s, y = kept[-1]
    H = explicit_bfgs_inverse(kept, (s @ y) / (y @ y))
    expected = -H @ gradients[-1]
    assert direction.stored == len(kept) and direction.skipped == 0
    assert not direction.restarted
    np.testing.assert_allclose(d, expected, rtol=0, atol=1e-10 * np.linalg.norm(expected))


def test_two_loop_pure_function_on_hand_pairs():
    # Two pairs in 2-d with γ = 1/2; expected from the direct formula N&W eq. 6.17.
    s = np.array([[1.0, 0.0], [1.0, 1.0]])
    y = np.array([[2.0, 0.5], [1.0, 2.0]])
    rho = 1.0 / np.einsum("ij,ij->i", s, y)
    g = np.array([0.3, -1.2])
    product = _two_loop(g, s, y, rho, [0, 1], 0.5)
    H = explicit_bfgs_inverse([(s[0], y[0]), (s[1], y[1])], 0.5)
    np.testing.assert_allclose(product, H @ g, rtol=1e-14)
    # The newest pair satisfies the secant equation H·y = s (N&W eq. 6.6).
    np.testing.assert_allclose(_two_loop(y[1], s, y, rho, [0, 1], 0.5), s[1], rtol=1e-14)


@pytest.mark.parametrize("how", ["deepcopy", "pickle"])
def test_lbfgs_copied_in_mid_run_continues_alike(how):
    # The compact form keeps several arrays of state; a copy taken after the ring has
    # wrapped must carry on exactly as the original.
    import copy
    import pickle

    A, b = spd_quadratic(5, seed=2, condition=50.0)
    rng = np.random.default_rng(4)
    points = list(rng.standard_normal((12, 5)))
    original = LBFGS(3)
    for x in points[:8]:
        original(x, A @ x - b)
    twin = (copy.deepcopy(original) if how == "deepcopy"
            else pickle.loads(pickle.dumps(original)))
    for x in points[8:]:
        np.testing.assert_array_equal(twin(x, A @ x - b), original(x, A @ x - b))
    assert (twin.stored, twin.skipped) == (original.stored, original.skipped)


def test_ring_buffer_keeps_the_newest_pairs_in_order():
    A, b = spd_quadratic(3, seed=7, condition=5.0)
    rng = np.random.default_rng(1)
    points = list(rng.standard_normal((8, 3)))
    gradients = [A @ x - b for x in points]
    direction = LBFGS(3)
    for k in range(1, len(points) + 1):
        d = direction(points[k - 1], gradients[k - 1])
        assert direction.stored == min(k - 1, 3)
    kept = [(points[i + 1] - points[i], gradients[i + 1] - gradients[i]) for i in (4, 5, 6)]
    s, y = kept[-1]
    H = explicit_bfgs_inverse(kept, (s @ y) / (y @ y))
    np.testing.assert_allclose(d, -H @ gradients[-1], rtol=1e-12)


# ------------------------------------------------------- L-BFGS: skip, stay, restart


def test_skip_rule_drops_pairs_without_positive_curvature():
    # f(x) = −½‖x‖² (concave) has sᵀy = −‖s‖² < 0 for every step: all pairs are skipped
    # and the direction stays −g (N&W eq. 6.7 needs sᵀy > 0 for a positive definite H).
    direction = LBFGS(5, scale_first=False)
    for x in (np.array([1.0, 2.0]), np.array([1.5, 2.5]), np.array([3.0, 2.0])):
        d = direction(x, -x)
        np.testing.assert_array_equal(d, x)
    assert direction.stored == 0 and direction.skipped == 2 and not direction.restarted


def test_skip_rule_threshold_is_the_cosine_between_s_and_y():
    # s = (1, 0); y = (c, 1) has cos(s, y) = c/√(1 + c²). Kept iff sᵀy > tol·‖s‖·‖y‖.
    tolerance = 0.1
    for c, kept in ((0.05, False), (0.2, True), (0.0, False), (-0.3, False)):
        direction = LBFGS(curvature_tolerance=tolerance)
        direction(np.zeros(2), np.array([-1.0, 0.0]))
        direction(np.array([1.0, 0.0]), np.array([-1.0 + c, 1.0]))
        assert direction.stored == int(kept)
        assert direction.skipped == int(not kept)


@pytest.mark.parametrize("dtype, cosine, kept", [
    (np.float64, 1e-9, True),    # valid curvature of a badly conditioned problem
    (np.float64, 1e-17, False),  # orthogonal to float64 precision (eps 2.2e-16)
    (np.float32, 1e-5, True),
    (np.float32, 1e-8, False),   # orthogonal to float32 precision (eps 1.2e-7)
])
def test_default_skip_floor_is_the_dtypes_machine_epsilon(dtype, cosine, kept):
    # s = (1, 0); y = (c, 1): cos(s, y) ≈ c for small c.
    direction = LBFGS()
    direction(np.zeros(2, dtype), np.array([-1.0, 0.0], dtype))
    direction(np.array([1.0, 0.0], dtype), np.array([-1.0 + cosine, 1.0], dtype))
    # −1 + c rounds in the dtype; the test needs c itself to survive.
    assert np.array([-1.0 + cosine], dtype)[0] != -1.0 or not kept
    assert direction.stored == int(kept) and direction.skipped == int(not kept)


def test_badly_scaled_problem_keeps_its_curvature_pairs():
    # Powell's badly scaled function (MGH problem 3) has Hessian condition ≈ 7e17 at
    # its minimiser, so valid pairs have cos(s, y) down to ≈ 2/√κ ≈ 2.4e-9 (the
    # Kantorovich bound). The default floor keeps every pair; a fixed 1e-8 floor
    # (this library's default before) loses some of them and needs more iterations.
    # How many it loses depends on the rounding of the path (numpy 2.4 loses 60 of 194,
    # earlier builds over 500), so only the direction of the effect is asserted.
    problem = get_problem("powell_badly_scaled")
    runs = {}
    for tolerance in (None, 1e-8):
        direction = LBFGS(10, curvature_tolerance=tolerance)
        run = descend((problem.value, problem.gradient), problem.start, controller=Wolfe(),
                      direction=direction, stop=stopping.GradientNorm(atol=1e-8, rtol=0.0)
                      | stopping.MaxIterations(5000))
        assert run.converged and problem.solved(run.value, rtol=1e-4)
        runs[tolerance] = (direction.skipped, run.iterations)
    assert runs[None][0] == 0
    assert runs[1e-8][0] > 0 and runs[1e-8][1] > runs[None][1]


def test_skipped_pair_leaves_the_older_pairs_in_use():
    A, b = spd_quadratic(3, seed=11, condition=10.0)
    x0, x1, x2 = np.zeros(3), np.array([0.3, -0.2, 0.1]), np.array([0.5, 0.1, -0.4])
    g0, g1 = A @ x0 - b, A @ x1 - b
    g2 = g1 - (x2 - x1)  # y = −s: negative curvature, skipped
    direction = LBFGS()
    d = feed(direction, [x0, x1, x2], [g0, g1, g2])
    assert direction.stored == 1 and direction.skipped == 1
    s, y = x1 - x0, g1 - g0
    expected = -explicit_bfgs_inverse([(s, y)], (s @ y) / (y @ y)) @ g2
    np.testing.assert_allclose(d, expected, rtol=1e-12)


@pytest.mark.parametrize("make", [LBFGS, NonlinearCG, lambda: NonlinearCG("pr+")])
def test_a_rejected_step_repeats_the_direction(make):
    # x did not move (the controller rejected the step): s = 0, no update.
    A, b = spd_quadratic(4, seed=5)
    x0, x1 = np.zeros(4), np.array([0.2, -0.1, 0.3, 0.05])
    direction = make()
    direction(x0, A @ x0 - b)
    first = direction(x1, A @ x1 - b)
    again = direction(x1.copy(), A @ x1 - b)
    np.testing.assert_allclose(again, first, rtol=1e-15)
    assert not direction.restarted
    if isinstance(direction, LBFGS):
        assert direction.stored == 1 and direction.skipped == 0


def test_cg_repeated_direction_is_checked_for_descent():
    # x did not move but the caller passes a different gradient: the repeated d is uphill.
    direction = NonlinearCG()
    direction(np.zeros(2), np.array([1.0, 0.0]))
    g = np.array([-1.0, 0.5])
    np.testing.assert_array_equal(direction(np.zeros(2), g), -g)
    assert direction.restarted


def test_lbfgs_restarts_when_the_product_overflows():
    # Constructed: s = 1e5·(1, 1), y = 1e-5·(1, 1) gives γ = sᵀy/yᵀy = 1e10. The next
    # step goes back to 0 (s = −1e5·(1, 1)) where g ~ 1e300, so sᵀy < 0: that pair is
    # skipped, and H·g ~ 1e310 overflows. The direction falls back to the finite −g and
    # drops its pair.
    direction = LBFGS()
    direction(np.zeros(2), np.full(2, 1e-5))
    direction(np.full(2, 1e5), np.full(2, 2e-5))
    assert direction.stored == 1
    g = np.array([1e300, -5e299])
    d = direction(np.zeros(2), g)
    np.testing.assert_array_equal(d, -g)
    assert direction.restarted and direction.stored == 0 and direction.skipped == 1
    # Later calls with moderate gradients build fresh pairs again.
    direction(np.full(2, -1.0), np.full(2, 1.0))  # y ~ 1e300: ‖y‖ overflows, skipped
    direction(np.full(2, -2.0), np.full(2, 0.5))
    assert direction.stored == 1 and direction.skipped == 2 and not direction.restarted


# ------------------------------------------------------------ NonlinearCG: β and restarts


def test_pr_plus_restarts_on_a_non_descent_direction():
    # Constructed: g0 = (1, 0), d0 = (−1, 0); the step overshoots to g1 = (−1, 0.1):
    # β_PR = g1ᵀ(g1 − g0)/‖g0‖² = 2.01 and d1 = −g1 + β·d0 = (−1.01, −0.1) has g1ᵀd1 = 1 > 0.
    direction = NonlinearCG("pr+")
    direction(np.zeros(2), np.array([1.0, 0.0]))
    g1 = np.array([-1.0, 0.1])
    d = direction(np.array([2.0, 0.0]), g1)
    np.testing.assert_array_equal(d, -g1)
    assert direction.restarted


def test_hager_zhang_keeps_descent_where_pr_plus_fails():
    # Same data: β_N = (yᵀg1 − 2‖y‖²·d0ᵀg1/d0ᵀy)/d0ᵀy = (2.01 − 4.01)/2 = −1, above
    # η_k = −1/(‖d0‖·min(0.01, ‖g0‖)) = −100, so d1 = −g1 − d0 = (2, −0.1).
    direction = NonlinearCG("hager_zhang")
    direction(np.zeros(2), np.array([1.0, 0.0]))
    d = direction(np.array([2.0, 0.0]), np.array([-1.0, 0.1]))
    np.testing.assert_allclose(d, [2.0, -0.1], rtol=1e-15)
    assert not direction.restarted


def test_hager_zhang_beta_without_and_with_truncation():
    # d0 = −g0 = (−1, 0) throughout; η = 0.01, so the floor is
    # η_k = −1/(‖d0‖·min(η, ‖g0‖)) = −100 (Hager & Zhang 2005, truncation of eq. 1.5).
    # g1 = (0.5, −0.5): y = (−0.5, −0.5), d0ᵀy = 0.5, ‖y‖² = 0.5, d0ᵀg1 = −0.5, yᵀg1 = 0,
    # β_N = (0 − 2·0.5·(−0.5)/0.5)/0.5 = 2 > −100, so d1 = −g1 + 2·d0 = (−2.5, 0.5).
    # g1 = (−3, 30): y = (−4, 30), d0ᵀy = 4, ‖y‖² = 916, d0ᵀg1 = 3, yᵀg1 = 912,
    # β_N = (912 − 2·916·3/4)/4 = −115.5 < −100, so β = −100 and d1 = (103, −30).
    for g1, expected in (([0.5, -0.5], [-2.5, 0.5]), ([-3.0, 30.0], [103.0, -30.0])):
        direction = NonlinearCG("hager_zhang")
        direction(np.zeros(2), np.array([1.0, 0.0]))
        d = direction(np.array([1.0, 0.0]), np.array(g1))
        np.testing.assert_allclose(d, expected, rtol=1e-14)
        assert not direction.restarted


def test_hager_zhang_restarts_when_d_y_is_not_positive():
    # d0 = (−1, 0), g0 = (1, 0), g1 = (2, 0): d0ᵀy = −1 ≤ 0, so β_N is undefined.
    direction = NonlinearCG("hager_zhang")
    direction(np.zeros(2), np.array([1.0, 0.0]))
    g1 = np.array([2.0, 0.0])
    np.testing.assert_array_equal(direction(np.array([0.1, 0.0]), g1), -g1)
    assert direction.restarted


@given(seed=st.integers(0, 2**32 - 1), n=st.integers(1, 6))
def test_hager_zhang_direction_has_sufficient_descent(seed, n):
    # Hager & Zhang 2005, Thm 1.1 (recalled from memory): with β = β_N and dᵀy ≠ 0,
    # gᵀd ≤ −(7/8)·‖g‖², whatever the line search. When dᵀy ≤ 0 we restart instead.
    rng = np.random.default_rng(seed)
    g0, g1 = rng.standard_normal((2, n))
    direction = NonlinearCG("hager_zhang")
    d0 = direction(np.zeros(n), g0)
    d1 = direction(np.ones(n), g1)
    y = g1 - g0
    dy = d0 @ y
    if dy <= 0:
        assert direction.restarted
        np.testing.assert_array_equal(d1, -g1)
        return
    beta_n = (y @ g1 - 2 * (y @ y) * (d0 @ g1) / dy) / dy
    floor = -1.0 / (np.linalg.norm(d0) * min(0.01, np.linalg.norm(g0)))
    assert not direction.restarted
    np.testing.assert_allclose(d1, -g1 + max(beta_n, floor) * d0, rtol=1e-10, atol=1e-12)
    if beta_n >= floor:
        assert g1 @ d1 <= -7 / 8 * (g1 @ g1) * (1 - 1e-12)
    else:
        assert g1 @ d1 < 0


def test_powell_orthogonality_restart_is_optional():
    # g1ᵀg0 = 0.5 ≥ 0.2·‖g1‖² = 0.2·1.25: Powell's (1977) test fires when switched on.
    g0, g1 = np.array([1.0, 0.0]), np.array([0.5, -1.0])
    plain = NonlinearCG("pr+")
    plain(np.zeros(2), g0)
    plain(np.array([1.0, 0.0]), g1)
    assert not plain.restarted
    powell = NonlinearCG("pr+", orthogonality_restart=POWELL_ORTHOGONALITY)
    powell(np.zeros(2), g0)
    np.testing.assert_array_equal(powell(np.array([1.0, 0.0]), g1), -g1)
    assert powell.restarted


def test_restart_every_counts_iterations_since_the_last_steepest_step():
    A, b = spd_quadratic(6, seed=2)
    direction = NonlinearCG("pr+", restart_every=3)
    x = np.zeros(6)
    flags = []
    for _ in range(8):
        g = A @ x - b
        d = direction(x, g)
        flags.append(direction.restarted)
        x = x - (g @ d) / (d @ A @ d) * d
    # Calls 1 (first), 4 and 7 are steepest; 4 and 7 count as restarts.
    assert flags == [False, False, False, True, False, False, True, False]


# ------------------------------------------- quadratics with exact line searches (N&W §5)


@pytest.mark.parametrize("n", [2, 5, 8])
@pytest.mark.parametrize("make", [
    pytest.param(lambda n: LBFGS(n), id="lbfgs-m=n"),
    pytest.param(lambda n: LBFGS(n + 4), id="lbfgs-m>n"),
    pytest.param(lambda n: LBFGS(1), id="lbfgs-m=1"),
    pytest.param(lambda n: NonlinearCG("pr+"), id="cg-pr+"),
    pytest.param(lambda n: NonlinearCG("hager_zhang"), id="cg-hager-zhang"),
])
def test_exact_line_searches_reproduce_linear_cg(make, n):
    # With exact line searches on a strictly convex quadratic:
    # * PR, PR+ and Hager–Zhang β all reduce to the linear-CG β, since gₖᵀgₖ₋₁ = 0 and
    #   dₖ₋₁ᵀgₖ = 0; the iterates are those of linear CG and the minimiser is reached in
    #   at most n steps (N&W §5.2; Hager & Zhang 2005, §1).
    # * BFGS from H0 = I generates the same iterates as CG and terminates in n steps
    #   (Nazareth 1979; recalled from memory). For L-BFGS the scaled H0 = γₖI changes
    #   every iteration, so H is not the full-BFGS matrix even when m >= n; what holds
    #   for any m >= 1 and any positive γₖ is that −Hₖgₖ stays parallel to the CG
    #   direction, so the iterates still equal linear CG's (Kolda, O'Leary & Nazareth,
    #   SIAM J. Optim. 8(4), 1998, recalled from memory). We assert that, not matrix
    #   equality.
    A, b = spd_quadratic(n, seed=n)
    x0 = np.ones(n)
    ours = exact_line_search_run(make(n), A, b, x0, n)
    reference = linear_cg_run(A, b, x0, len(ours) - 1)
    scale = np.linalg.norm(np.linalg.solve(A, b) - x0)
    # Equal up to rounding, which both recurrences amplify (measured: < 5e-9·scale).
    np.testing.assert_allclose(ours, reference, rtol=0, atol=1e-7 * scale)
    final_gradient = A @ ours[-1] - b
    # Up to rounding (measured: ratio < 2e-8 here; n steepest-descent steps leave ~1e-1).
    assert np.linalg.norm(final_gradient) <= 1e-6 * np.linalg.norm(A @ x0 - b)


def test_lbfgs_with_full_memory_has_no_restarts_or_skips_on_a_quadratic():
    A, b = spd_quadratic(8, seed=4)
    direction = LBFGS(8)
    x = np.zeros(8)
    for _ in range(8):
        g = A @ x - b
        d = direction(x, g)
        assert not direction.restarted
        x = x - (g @ d) / (d @ A @ d) * d
    assert direction.skipped == 0 and direction.stored == 7


# --------------------------------------------------------------- shapes and dtypes


def shifted_quadratic(A, minimiser):
    """f(x) = ½(x − x*)ᵀA(x − x*), written so that f* = 0 and f has no cancellation.

    (Written as ½xᵀAx − bᵀx, f would lose all relative accuracy near the minimiser, and
    a value-based search such as Armijo would stall there at rounding level.)
    """

    def f(x):
        e = np.ravel(x) - minimiser
        return float(0.5 * e @ A @ e)

    def g(x):
        return (A @ (np.ravel(x) - minimiser)).reshape(np.shape(x))

    return f, g


@pytest.mark.parametrize("make", [LBFGS, NonlinearCG, lambda: NonlinearCG("pr+")])
def test_arrays_of_shape_2_by_3(make):
    A, b = spd_quadratic(6, seed=9, condition=10.0)
    f, g = shifted_quadratic(A, b)

    run = descend((f, g), np.zeros((2, 3)), controller=Armijo(), direction=make(),
                  stop=stopping.GradientNorm(atol=1e-10, rtol=0.0) | stopping.MaxIterations(300))
    assert run.x.shape == (2, 3)
    assert run.converged, run.verdict.reason
    np.testing.assert_allclose(run.x.ravel(), b, atol=1e-9)


@pytest.mark.parametrize("make", [LBFGS, NonlinearCG])
def test_float32_stays_float32(make):
    direction = make()
    x0 = np.array([1.0, 2.0], dtype=np.float32)
    d0 = direction(x0, np.array([1.0, -1.0]))  # a float64 gradient is cast to x's dtype
    d1 = direction(x0 + np.float32(0.5), np.array([1.5, -0.2], dtype=np.float32))
    assert d0.dtype == np.float32 and d1.dtype == np.float32
    if isinstance(direction, LBFGS):
        assert direction._s.dtype == np.float32


@pytest.mark.parametrize("make", [LBFGS, NonlinearCG])
def test_caller_mutating_arrays_does_not_change_memory(make):
    A, b = spd_quadratic(3, seed=6)
    x0, x1 = np.zeros(3), np.array([0.1, 0.2, -0.1])
    reference, mutated = make(), make()
    reference(x0.copy(), A @ x0 - b)
    expected = reference(x1.copy(), A @ x1 - b)
    x, g = x0.copy(), A @ x0 - b
    d = mutated(x, g)
    x[:] = 99.0
    g[:] = -7.0
    d *= 3.0
    np.testing.assert_allclose(mutated(x1.copy(), A @ x1 - b), expected, rtol=1e-15)


def test_steepest_descent_still_satisfies_the_protocol():
    assert isinstance(SteepestDescent(), Direction)


# ------------------------------------------------------------- descend against scipy


def test_descend_lbfgs_armijo_matches_scipy_bfgs_on_rosenbrock():
    optimize = pytest.importorskip("scipy.optimize")
    x0 = np.array([-1.2, 1.0])  # the standard start (Moré, Garbow & Hillstrom 1981, #1)
    reference = optimize.minimize(optimize.rosen, x0, jac=optimize.rosen_der,
                                  method="BFGS", options={"gtol": 1e-10})
    run = descend((optimize.rosen, optimize.rosen_der), x0, controller=Armijo(),
                  direction=LBFGS(),
                  stop=stopping.GradientNorm(atol=1e-9, rtol=0.0)
                  | stopping.MaxIterations(500))
    assert run.converged, run.verdict.reason
    # The published minimiser is (1, 1) with f = 0; ‖x − x*‖ ≤ ‖g‖/λ_min(∇²f) ≈ 2.5·‖g‖.
    np.testing.assert_allclose(run.x, reference.x, atol=1e-7)
    np.testing.assert_allclose(run.x, [1.0, 1.0], atol=1e-7)
    assert run.value <= 1e-14
    # Measured: 24 iterations, 31 values, 25 gradients, no skipped pair; steepest descent
    # with the same search needs about 23 000 iterations.
    assert run.iterations < 100


def test_descend_lbfgs_armijo_matches_scipy_bfgs_on_a_convex_quadratic():
    optimize = pytest.importorskip("scipy.optimize")
    A, exact = spd_quadratic(10, seed=10, condition=1e3)
    f, g = shifted_quadratic(A, exact)
    x0 = np.zeros(10)
    reference = optimize.minimize(f, x0, jac=g, method="BFGS", options={"gtol": 1e-10})
    run = descend((f, g), x0, controller=Armijo(), direction=LBFGS(5),
                  stop=stopping.GradientNorm(atol=1e-10, rtol=0.0)
                  | stopping.MaxIterations(500))
    assert run.converged, run.verdict.reason
    # ‖x − x*‖ ≤ ‖g‖₂/λ_min ≤ √10·1e-10/1 for our stop; scipy's own x to its gtol likewise.
    np.testing.assert_allclose(run.x, exact, atol=1e-8)
    np.testing.assert_allclose(run.x, reference.x, atol=1e-8)


@pytest.mark.parametrize("beta", ["pr+", "hager_zhang"])
def test_descend_with_nonlinear_cg_on_rosenbrock(beta):
    optimize = pytest.importorskip("scipy.optimize")
    run = descend((optimize.rosen, optimize.rosen_der), np.array([-1.2, 1.0]),
                  controller=Armijo(), direction=NonlinearCG(beta),
                  stop=stopping.GradientNorm(atol=1e-8, rtol=0.0)
                  | stopping.MaxIterations(5000))
    assert run.converged, run.verdict.reason
    np.testing.assert_allclose(run.x, [1.0, 1.0], atol=1e-6)


def test_history_records_restarts():
    A, b = spd_quadratic(12, seed=12, condition=1e3)
    run = descend((lambda x: float(0.5 * x @ A @ x - b @ x), lambda x: A @ x - b),
                  np.zeros(12), controller=Armijo(),
                  direction=NonlinearCG("pr+", restart_every=4),
                  stop=stopping.MaxIterations(9))
    # Calls 1 (first, not a restart), 5 and 9 are steepest by count; with this problem no
    # non-descent restart happens in between (measured), so the record is exact.
    expected = [False, False, False, False, False, True, False, False, False, True]
    np.testing.assert_array_equal(run.history.restarted, expected)  # entry 0: the start
