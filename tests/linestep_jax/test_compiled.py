"""The compiled path (`linestep.jax`) against the host path, and its own contract.

The compiled searches are the host algorithms written with `lax` control flow,
so on the same problem they must take the same steps (within rounding) with
the same evaluation counts. Checked three ways:

* the interpolation twins against `linestep._interpolate` (equal in float64);
* lockstep: both paths called from the same point, step after step, on
  invented random quadratics and on a function that is NaN outside a box;
* whole runs of `linestep.jax.descend` against `linestep.descend` on
  Moré–Garbow–Hillstrom problems 1, 5, 14 and 21 (MGH 1981), whose jnp
  versions are first checked against the numpy ones in `linestep.bench`.

Then the JAX-specific contract: `jax.jit`, `jax.vmap` over starting points,
pytree parameters, float32 kept, structure errors at trace time, argument
checks shared with the host classes.
"""

from __future__ import annotations

import inspect
import math

import numpy as np
import pytest
from hypothesis import example, given
from hypothesis import strategies as st

jax = pytest.importorskip("jax", reason="the jax extra is not installed")
import jax.numpy as jnp  # noqa: E402
from jax.flatten_util import ravel_pytree  # noqa: E402

import linestep  # noqa: E402
import linestep.jax as lj  # noqa: E402
from linestep import _interpolate as host_interpolate  # noqa: E402
from linestep import stopping  # noqa: E402
from linestep._initial import PreviousTrial, QuadraticTrial, ScaledTrial  # noqa: E402
from linestep.bench import get_problem  # noqa: E402
from linestep.directions import LBFGS, SteepestDescent  # noqa: E402
from linestep.jax import _interpolate, _problems  # noqa: E402
from linestep.rules.barzilai_borwein import BarzilaiBorwein  # noqa: E402
from linestep.rules.schedule import Schedule  # noqa: E402
from linestep.searches.nonmonotone import NonmonotoneArmijo  # noqa: E402
from linestep.searches.wolfe import Wolfe  # noqa: E402

MGH = ["rosenbrock", "beale", "wood", "extended_rosenbrock"]


def status_name(code) -> str:
    return lj.StatusCode(int(code)).name


# -------------------------------------------------------- the jnp MGH problems


@pytest.mark.parametrize("name", MGH)
def test_jnp_problems_match_the_numpy_ones(name):
    # MGH 1981 problems 1, 5, 14, 21; the numpy versions carry the published f* = 0.
    problem = get_problem(name)
    fun = getattr(_problems, name)
    rng = np.random.default_rng(3)
    points = [problem.start, *problem.minimizers,
              *(problem.start + rng.standard_normal(problem.dimension) for _ in range(3))]
    for x in points:
        assert float(fun(jnp.asarray(x))) == pytest.approx(problem.value(x), rel=1e-13, abs=0)
        np.testing.assert_allclose(jax.grad(fun)(jnp.asarray(x)), problem.gradient(x),
                                   rtol=1e-12, atol=1e-12)


# ------------------------------------------------------ interpolation twins


def _none_is_nan(value):
    return math.nan if value is None else value


def assert_twin(twin, host, a, b):
    """Equal up to a few rounding errors: XLA may fuse a·b + c into one multiply-add,
    rounding once where Python rounds twice. Both formulas divide differences over
    [a, b], which amplifies rounding by about (|a| + |b|)/|b − a|."""
    twin, host = float(twin), _none_is_nan(host)
    if math.isnan(host):
        assert math.isnan(twin)
        return
    size = abs(a) + abs(b) + abs(host)
    condition = max(1.0, (abs(a) + abs(b)) / abs(b - a)) if a != b else 1.0
    assert twin == pytest.approx(host, rel=0,
                                 abs=16 * np.finfo(float).eps * size * condition)


# No subnormals: XLA on CPU flushes them to zero, so a bracket of subnormal width is zero
# wide to the twin (NaN) but not to the host. Neither search interpolates across such a
# bracket: both end at the rounding floor first.
finite = st.floats(-1e3, 1e3, allow_nan=False, allow_subnormal=False)
positive = st.floats(1e-3, 1e3)


@given(a=finite, fa=finite, da=finite, b=finite, fb=finite, db=finite)
def test_cubic_and_quadratic_twins_equal_the_host_formulas(a, fa, da, b, fb, db):
    # N&W 2006 eqs. 3.57 and 3.59 (scaled form of Moré–Thuente 1994 §4).
    assert_twin(_CUBIC(a, fa, da, b, fb, db),
                host_interpolate.cubic_from_slopes(a, fa, da, b, fb, db), a, b)
    assert_twin(_QUADRATIC(a, fa, da, b, fb),
                host_interpolate.quadratic_from_slope(a, fa, da, b, fb), a, b)


@given(f0=finite, d0=st.floats(-1e3, -1e-3), a=positive, fa=finite, b=positive, fb=finite)
@example(f0=0.0, d0=-569.0, a=996.0, fa=1.3359375, b=998.0, fb=0.0)  # close trials
def test_cubic_backtrack_twin_equals_the_host_formula(f0, d0, a, fa, b, fb):
    # N&W 2006 eq. 3.58.
    assert_twin(_BACKTRACK(f0, d0, a, fa, b, fb),
                host_interpolate.cubic_backtrack(f0, d0, a, fa, b, fb), a, b)


@pytest.mark.parametrize("t", [None, math.nan, -1.0, 0.3, 2.0])
def test_clip_twin(t):
    host = host_interpolate.clip(None if t is None or math.isnan(t) else t, 0.1, 0.5)
    assert float(_interpolate.clip(jnp.asarray(math.nan if t is None else t), 0.1, 0.5)) == host


_CUBIC = jax.jit(_interpolate.cubic_from_slopes)
_QUADRATIC = jax.jit(_interpolate.quadratic_from_slope)
_BACKTRACK = jax.jit(_interpolate.cubic_backtrack)


# --------------------------------------------------------------- lockstep


def _pairs():
    """name -> (host controller, compiled search, host objective fused?)."""
    armijo, fixed = linestep.Armijo, linestep.Fixed
    return {
        "armijo": (armijo(), lj.armijo(), True),
        "armijo_unfused": (armijo(), lj.armijo(fused=False), False),
        "armijo_quadratic": (armijo(interpolation="quadratic"),
                             lj.armijo(interpolation="quadratic"), True),
        "armijo_shrink": (armijo(interpolation=None, shrink=0.3),
                          lj.armijo(interpolation=None, shrink=0.3), True),
        "armijo_previous": (armijo(initial=PreviousTrial(growth=2.0)),
                            lj.armijo(initial=PreviousTrial(growth=2.0)), True),
        "armijo_quadratic_trial": (armijo(initial=QuadraticTrial(cap=1.0)),
                                   lj.armijo(initial=QuadraticTrial(cap=1.0)), True),
        "armijo_scaled": (armijo(initial=ScaledTrial(2.0)),
                          lj.armijo(initial=ScaledTrial(2.0)), True),
        "nonmonotone_max": (NonmonotoneArmijo(memory=4), lj.nonmonotone_armijo(memory=4),
                            True),
        "nonmonotone_average": (NonmonotoneArmijo(reference="average", eta=0.7),
                                lj.nonmonotone_armijo(reference="average", eta=0.7), True),
        "wolfe": (Wolfe(), lj.wolfe(), True),
        "wolfe_weak": (Wolfe(strong=False, c2=0.5), lj.wolfe(strong=False, c2=0.5), True),
        "wolfe_tight": (Wolfe(c2=0.1, initial=3.0), lj.wolfe(c2=0.1, initial=3.0), True),
        "fixed": (fixed(0.01), lj.fixed(0.01), True),
        "fixed_unfused": (fixed(0.01), lj.fixed(0.01, fused=False), False),
        "schedule": (Schedule(lambda k: 0.02 / (1 + k)), lj.schedule(lambda k: 0.02 / (1 + k)),
                     True),
        "barzilai_borwein": (BarzilaiBorwein(), lj.barzilai_borwein(), True),
        "barzilai_borwein_long_armijo": (
            BarzilaiBorwein(variant="long", globalize=linestep.Armijo()),
            lj.barzilai_borwein(variant="long", globalize=lj.armijo()), True),
        "barzilai_borwein_short_pure": (
            BarzilaiBorwein(variant="short", globalize=None, first=0.01),
            lj.barzilai_borwein(variant="short", globalize=None, first=0.01), True),
    }


PAIR_NAMES = sorted(_pairs())


def quadratic(seed: int, n: int = 5):
    """An invented SPD quadratic ½xᵀAx − bᵀx, condition number 100, and three starts."""
    rng = np.random.default_rng(seed)
    q, _ = np.linalg.qr(rng.standard_normal((n, n)))
    a = jnp.asarray(q @ np.diag(np.logspace(0, 2, n)) @ q.T)
    b = jnp.asarray(rng.standard_normal(n))

    def fun(x):
        return 0.5 * x @ (a @ x) - b @ x

    return fun, [jnp.asarray(3.0 * rng.standard_normal(n)) for _ in range(3)]


def lockstep(host, search, fun, x, steps: int, fused: bool) -> None:
    """Call both paths from the host's point each time; compare each step."""
    objective = lj.objective(fun, fused=fused)
    step = _jitted_step(search)
    state = search.begin(x)
    value, gradient = jax.value_and_grad(fun)(x)
    for k in range(steps):
        theirs = host(objective, x, -gradient, value=float(value), gradient=gradient)
        ours = step(fun, x, -gradient, value=value, gradient=gradient, state=state)
        where = f"step {k}: host {theirs.status.name} {theirs.size}, compiled " \
                f"{status_name(ours.status)} {float(ours.size)}"
        assert status_name(ours.status) == theirs.status.name, where
        assert float(ours.size) == pytest.approx(theirs.size, rel=1e-9, abs=0), where
        assert int(ours.values) == theirs.evaluations.values, where
        # The compiled record also counts ∇f at a new point that value-only trials
        # did not evaluate (the host loop evaluates it after the step).
        extra = int(not fused and theirs.size > 0)
        assert int(ours.gradients) == theirs.evaluations.gradients + extra, where
        np.testing.assert_allclose(ours.x, theirs.x, rtol=1e-9, atol=1e-12)
        state = ours.state
        if theirs.size > 0:
            x = theirs.x
            value, gradient = jax.value_and_grad(fun)(x)


_STEPS = {}


def _jitted_step(search):
    """One jitted `step` per search, shared by the tests (compiled once per function)."""
    if search not in _STEPS:
        _STEPS[search] = jax.jit(search.step, static_argnums=0)
    return _STEPS[search]


@pytest.mark.parametrize("name", PAIR_NAMES)
def test_each_step_matches_the_host_on_random_quadratics(name):
    host, search, fused = _pairs()[name]
    fun, starts = quadratic(0)
    for x in starts:
        host.reset()
        lockstep(host, search, fun, x, steps=12, fused=fused)


def boxed(x):
    """‖x‖² inside the box max|x_i| < 2, NaN outside (invented)."""
    return jnp.where(jnp.max(jnp.abs(x)) < 2.0, jnp.sum(x * x) + jnp.sum(x[:-1] * x[1:]), jnp.nan)


@pytest.mark.parametrize("name", PAIR_NAMES)
def test_non_finite_values_shrink_the_step_as_on_the_host(name):
    host, search, fused = _pairs()[name]
    x = jnp.array([1.5, -1.0, 0.5])
    lockstep(host, search, boxed, x, steps=4, fused=fused)


def ridge(x):
    """Σ cos xᵢ + 0.05‖x‖² (invented): concave near 0, so BB pairs there have sᵀy < 0."""
    return jnp.sum(jnp.cos(x)) + 0.05 * jnp.sum(x * x)


@pytest.mark.parametrize("name", [n for n in PAIR_NAMES if n.startswith("barzilai")])
def test_negative_curvature_grows_the_trial_as_on_the_host(name):
    host, search, fused = _pairs()[name]
    x = jnp.array([0.3, -0.2, 0.1])
    lockstep(host, search, ridge, x, steps=8, fused=fused)
    host.reset()
    lockstep(host, search, ridge, x, steps=3, fused=fused)
    # the case reaches the branch: the messages say the trial was doubled
    assert any("doubled" in step.message for step in _host_steps(host, ridge, x, 3)
               if step.message)


@pytest.mark.parametrize("name", [n for n in PAIR_NAMES if n.startswith("wolfe")])
def test_wolfe_extrapolates_as_on_the_host_where_f_is_concave(name):
    # Near 0 `ridge` is concave along −∇f, so the bracketing phase extrapolates, where
    # a cubic with no minimiser ahead takes the blind step (the host's rule).
    host, search, fused = _pairs()[name]
    lockstep(host, search, ridge, jnp.array([0.3, -0.2, 0.1]), steps=6, fused=fused)


def test_wolfe_on_a_concave_ray_matches_the_host_trial_for_trial():
    # f(x) = −x² − 0.01x (invented, the concave ray of issue 14's repro): every cubic
    # through two trials is degenerate; the twin must extrapolate as the host does.
    host, search = Wolfe(max_size=1e6), lj.wolfe(max_size=1e6)
    lockstep(host, search, lambda x: -jnp.sum(x * x) - 0.01 * jnp.sum(x),
             jnp.zeros(1), steps=1, fused=True)


def _host_steps(host, fun, x, steps: int) -> list:
    """`steps` steps of the host's pure-BB copy (its messages are not replaced by a
    globalising search's) from x."""
    host = BarzilaiBorwein(variant=host.variant, first=host.first, globalize=None)
    objective, out = lj.objective(fun), []
    for _ in range(steps):
        value, gradient = jax.value_and_grad(fun)(x)
        out.append(host(objective, x, -gradient, value=float(value), gradient=gradient))
        x = out[-1].x
    return out


# ------------------------------------------------------------ whole runs


def _runs():
    return {
        "armijo_steepest": (linestep.Armijo, SteepestDescent, lj.armijo, lj.steepest_descent),
        "wolfe_lbfgs": (Wolfe, LBFGS, lj.wolfe, lj.lbfgs),
        # A budget of 2 trials makes some L-BFGS steps fail: the retry along −∇f.
        "armijo2_lbfgs": (lambda: linestep.Armijo(max_evaluations=2), LBFGS,
                          lambda: lj.armijo(max_evaluations=2), lj.lbfgs),
    }


def _both(problem_name: str, run_name: str, limit: int) -> tuple:
    host_search, host_direction, search, direction = _runs()[run_name]
    fun = getattr(_problems, problem_name)
    x0 = jnp.asarray(get_problem(problem_name).start)
    stop = stopping.GradientNorm(atol=1e-6, rtol=1e-8) | stopping.MaxIterations(limit)
    theirs = linestep.descend(lj.objective(fun), x0, controller=host_search(),
                              direction=host_direction(), stop=stop)
    ours = lj.descend(fun, x0, search=search(), direction=direction(), max_iterations=limit)
    return theirs, ours


@pytest.mark.parametrize("run_name", sorted(_runs()))
@pytest.mark.parametrize("problem_name", MGH)
def test_compiled_descend_takes_the_host_iterations(problem_name, run_name):
    # 25 iterations: long enough for restarts, retries and the stopping test, short
    # enough that rounding differences (XLA fuses multiply-adds) cannot grow into a
    # different path on these nonconvex problems.
    theirs, ours = _both(problem_name, run_name, limit=25)
    assert int(ours.iterations) == theirs.iterations
    assert int(ours.values) == theirs.evaluations.values
    assert int(ours.gradients) == theirs.evaluations.gradients
    assert ours.verdict().kind is theirs.verdict.kind
    np.testing.assert_allclose(ours.x, theirs.x, rtol=1e-6, atol=1e-8)


@pytest.mark.slow
@pytest.mark.parametrize("problem_name", MGH)
def test_compiled_and_host_lbfgs_wolfe_both_solve_the_problem(problem_name):
    # To convergence the paths may part by rounding; both must reach f* = 0 (MGH 1981).
    theirs, ours = _both(problem_name, "wolfe_lbfgs", limit=500)
    problem = get_problem(problem_name)
    assert theirs.converged and bool(ours.converged)
    assert problem.solved(theirs.value) and problem.solved(float(ours.value))
    assert abs(int(ours.iterations) - theirs.iterations) <= max(5, theirs.iterations // 2)


def test_lbfgs_directions_match_the_host_along_a_run():
    # Feed both directions the same (x, ∇f) sequence, including a rejected step
    # (x unchanged) and a pair with sᵀy < 0 (skipped: N&W eq. 6.7 needs sᵀy > 0).
    fun = _problems.rosenbrock
    host, ours = LBFGS(memory=3), lj.lbfgs(memory=3)
    state = ours.begin(jnp.zeros(2))
    propose = jax.jit(ours.propose)
    points = [jnp.array(p) for p in ([-1.2, 1.0], [-1.0, 1.0], [-1.0, 1.0], [-0.9, 0.7],
                                     [-0.95, 0.95], [-0.5, 0.2], [0.0, 0.0], [0.5, 0.3],
                                     [0.9, 0.8], [0.95, 0.9])]
    for x in points:
        g = jax.grad(fun)(x)
        expected = host(x, g)
        proposal = propose(x, g, state)
        state = proposal.state
        np.testing.assert_allclose(proposal.direction, expected, rtol=1e-12, atol=1e-14)
        assert bool(proposal.restarted) == host.restarted
        assert int(state.method.stored) == host.stored
        assert int(state.method.skipped) == host.skipped


def test_exact_counts_on_the_bowl():
    # f = ‖x‖² from (3, −4) along −∇f: φ(1) = φ(0) fails sufficient decrease and the
    # quadratic model puts the next trial at the minimiser t = 1/2 (N&W eq. 3.57).
    f = lambda x: jnp.sum(x ** 2)  # noqa: E731
    x = jnp.array([3.0, -4.0])
    for search, counts in ((lj.armijo(), (2, 2)), (lj.wolfe(), (2, 2)),
                           (lj.armijo(fused=False), (2, 1))):
        out = _jitted_step(search)(f, x, -2 * x, value=25.0, gradient=2 * x,
                                   state=search.begin(x))
        assert status_name(out.status) == "accepted" and float(out.size) == 0.5
        assert (int(out.values), int(out.gradients)) == counts
        assert float(out.value) == 0.0


# ----------------------------------------------------------- jit and vmap


@pytest.mark.slow
def test_vmap_over_starting_points_equals_separate_runs():
    fun = _problems.extended_rosenbrock
    base = jnp.tile(jnp.array([-1.2, 1.0]), 3)
    starts = jnp.stack([base, base * 0.5, base + 0.25, -base])
    solve = lambda x0: lj.descend(fun, x0, search=lj.wolfe(), direction=lj.lbfgs(),  # noqa: E731
                                  max_iterations=200)
    batch = jax.jit(jax.vmap(solve))(starts)
    assert batch.x.shape == starts.shape
    for i, x0 in enumerate(starts):
        single = solve(x0)
        assert int(batch.iterations[i]) == int(single.iterations)
        assert int(batch.values[i]) == int(single.values)
        assert int(batch.reason[i]) == int(single.reason)
        np.testing.assert_allclose(batch.x[i], single.x, rtol=1e-10, atol=1e-12)
    assert bool(jnp.all(batch.converged))


@pytest.mark.slow
def test_vmap_over_a_search_step():
    f = lambda x: jnp.sum((x - 1.0) ** 2 * jnp.arange(1.0, 4.0))  # noqa: E731
    search = lj.wolfe()
    xs = jnp.stack([jnp.zeros(3), jnp.ones(3) * 3.0, jnp.array([1.0, 5.0, -2.0])])

    def one(x):
        value, gradient = jax.value_and_grad(f)(x)
        return search.step(f, x, -gradient, value=value, gradient=gradient,
                           state=search.begin(x))

    batch = jax.jit(jax.vmap(one))(xs)
    one = jax.jit(one)
    for i in range(3):
        single = one(xs[i])
        assert float(batch.size[i]) == float(single.size)
        assert int(batch.values[i]) == int(single.values)
        assert int(batch.status[i]) == int(single.status)


def test_a_training_loop_compiled_with_scan():
    # An invented two-parameter-block least-squares fit, 25 Armijo steps in lax.scan.
    rng = np.random.default_rng(0)
    features = jnp.asarray(rng.standard_normal((40, 3)))
    targets = features @ jnp.array([1.0, -2.0, 0.5]) + 0.3

    def loss(p):
        return jnp.mean((features @ p["w"] + p["b"] - targets) ** 2)

    search = lj.armijo(initial=PreviousTrial(growth=2.0))
    params = {"w": jnp.zeros(3), "b": jnp.zeros(())}

    def body(carry, _):
        p, state = carry
        value, gradient = jax.value_and_grad(loss)(p)
        direction = jax.tree_util.tree_map(jnp.negative, gradient)
        out = search.step(loss, p, direction, value=value, gradient=gradient, state=state)
        return (out.x, out.state), out.value

    (fitted, state), values = jax.jit(
        lambda p: jax.lax.scan(body, (p, search.begin(p)), None, length=25))(params)
    assert bool(jnp.all(jnp.diff(values) <= 0))  # Armijo steps only decrease f
    assert int(state.calls) == 25
    # The same loop in Python, one jitted step at a time, gives the same fit.
    p, state2 = params, search.begin(params)
    step = jax.jit(search.step, static_argnums=0)
    for _ in range(25):
        value, gradient = jax.value_and_grad(loss)(p)
        out = step(loss, p, jax.tree_util.tree_map(jnp.negative, gradient), value=value,
                   gradient=gradient, state=state2)
        p, state2 = out.x, out.state
    for key in params:
        np.testing.assert_allclose(fitted[key], p[key], rtol=1e-10, atol=1e-12)


# ----------------------------------------------------------------- pytrees

# Whole runs with each kind of search: backtracking, bracketing, BB.
RUN_SEARCHES = pytest.mark.parametrize(
    "search", [lj.armijo(), lj.wolfe(), lj.barzilai_borwein()], ids=["armijo", "wolfe", "bb"])


def direction_for(search):
    """L-BFGS, except for Barzilai–Borwein, which is defined along −∇f only."""
    if isinstance(search, type(lj.barzilai_borwein())):
        return lj.steepest_descent()
    return lj.lbfgs()


@pytest.mark.slow
@RUN_SEARCHES
def test_pytree_parameters_run_as_their_flattened_vector(search):
    def loss_tree(p):
        w, b, c = p["w"], p["b"], p["extra"][0]
        return (jnp.sum((w @ jnp.array([1.0, 2.0, 3.0]) - 1.0) ** 2) + jnp.sum((b - 2.0) ** 2)
                + 3.0 * (c + 1.0) ** 2 + 0.1 * jnp.sum(w ** 2))

    tree = {"w": jnp.ones((2, 3)), "b": jnp.array([0.5, -0.5]), "extra": [jnp.array(3.0)]}
    flat, unravel = ravel_pytree(tree)
    direction = direction_for(search)
    by_tree = lj.descend(loss_tree, tree, search=search, direction=direction,
                         max_iterations=300)
    by_flat = lj.descend(lambda v: loss_tree(unravel(v)), flat, search=search,
                         direction=direction, max_iterations=300)
    assert jax.tree_util.tree_structure(by_tree.x) == jax.tree_util.tree_structure(tree)
    assert int(by_tree.iterations) == int(by_flat.iterations)
    assert int(by_tree.values) == int(by_flat.values)
    np.testing.assert_allclose(ravel_pytree(by_tree.x)[0], by_flat.x,
                               rtol=1e-9, atol=1e-10)
    assert bool(by_tree.converged)


# ------------------------------------------------------------------ float32


def _float_dtypes(tree):
    return {leaf.dtype for leaf in jax.tree_util.tree_leaves(tree)
            if jnp.issubdtype(leaf.dtype, jnp.floating)}


@pytest.mark.slow
@RUN_SEARCHES
def test_float32_parameters_stay_float32_with_x64_on(search):
    fun = _problems.extended_rosenbrock
    x0 = jnp.tile(jnp.array([-1.2, 1.0], jnp.float32), 4)
    run = lj.descend(fun, x0, search=search, direction=direction_for(search),
                     max_iterations=3000, gradient_atol=1e-3)
    assert _float_dtypes(run) == {jnp.dtype(jnp.float32)}
    assert run.verdict().kind.value == "converged"
    out = search.step(fun, x0, -jax.grad(fun)(x0), state=search.begin(x0))
    assert _float_dtypes(out) == {jnp.dtype(jnp.float32)}


@pytest.mark.parametrize("search", [lj.armijo(), lj.armijo(fused=False), lj.wolfe(),
                                    lj.barzilai_borwein(), lj.fixed(0.1)],
                         ids=["armijo", "armijo_unfused", "wolfe", "bb", "fixed"])
def test_float64_direction_and_gradient_are_cast_to_float32_parameters(search):
    f = lambda x: jnp.sum(x.astype(jnp.float64) ** 2)  # noqa: E731
    x = jnp.array([3.0, -4.0], jnp.float32)
    wide = 2.0 * x.astype(jnp.float64)
    out = _jitted_step(search)(f, x, -wide, value=25.0, gradient=wide, state=search.begin(x))
    assert status_name(out.status) == "accepted"
    assert _float_dtypes(out) == {jnp.dtype(jnp.float32)}
    direction = lj.lbfgs()
    assert direction.propose(x, wide, direction.begin(x)).direction.dtype == jnp.float32


def test_float32_with_jax_defaults(x64_off):
    fun = _problems.extended_rosenbrock
    x0 = jnp.tile(jnp.array([-1.2, 1.0]), 4)
    assert x0.dtype == jnp.float32
    run = lj.descend(fun, x0, search=lj.wolfe(), direction=lj.lbfgs(), gradient_atol=1e-3)
    assert _float_dtypes(run) == {jnp.dtype(jnp.float32)}
    assert bool(run.converged)
    np.testing.assert_allclose(run.x, np.ones(8), atol=1e-2)


# -------------------------------------------------------------- bad input


def test_non_finite_origin_is_reported_not_raised():
    search = lj.armijo()
    x = jnp.array([1.0, 2.0])
    out = search.step(lambda x: jnp.sum(x ** 2), x, -x, value=jnp.nan, gradient=x,
                      state=search.begin(x))
    assert status_name(out.status) == "non_finite"
    assert int(out.values) == 0 and float(out.size) == 0.0
    np.testing.assert_array_equal(out.x, x)


def test_not_descent_and_stationary_points_evaluate_nothing():
    search = lj.wolfe()
    x = jnp.array([1.0, 2.0])
    f = lambda x: jnp.sum(x ** 2)  # noqa: E731
    state = search.begin(x)
    up = search.step(f, x, x, value=5.0, gradient=2 * x, state=state)
    assert status_name(up.status) == "not_descent" and int(up.values) == 0
    assert int(up.state.calls) == 0
    flat = search.step(f, jnp.zeros(2), jnp.ones(2), value=0.0, gradient=jnp.zeros(2),
                       state=state)
    assert status_name(flat.status) == "accepted" and float(flat.size) == 0.0
    assert int(flat.values) == 0


def test_barzilai_borwein_rejects_other_directions_as_not_descent():
    search = lj.barzilai_borwein()
    x = jnp.array([1.0, 2.0])
    out = search.step(lambda x: jnp.sum(x ** 2), x, jnp.array([-1.0, 0.0]), value=5.0,
                      gradient=2 * x, state=search.begin(x))
    assert status_name(out.status) == "not_descent" and int(out.values) == 0
    scaled = search.step(lambda x: jnp.sum(x ** 2), x, -0.5 * x, value=5.0,
                         gradient=2 * x, state=search.begin(x))
    assert status_name(scaled.status) == "accepted"


def test_a_bad_schedule_size_leaves_x_unchanged():
    rule = lj.schedule(lambda k: -1.0)
    x = jnp.array([1.0])
    out = rule.step(lambda x: jnp.sum(x ** 2), x, -x, state=rule.begin(x))
    assert status_name(out.status) == "non_finite"
    np.testing.assert_array_equal(out.x, x)


def test_descend_from_a_non_finite_start_fails_at_once():
    run = lj.descend(lambda x: jnp.sum(jnp.log(x)), jnp.array([-1.0, 1.0]))
    assert lj.Reason(int(run.reason)) is lj.Reason.non_finite_start
    assert run.verdict().kind.value == "failed" and int(run.iterations) == 0


def test_a_state_for_other_parameters_raises_at_trace_time():
    search = lj.armijo()
    f = lambda p: sum(jnp.sum(v ** 2) for v in jax.tree_util.tree_leaves(p))  # noqa: E731
    params = {"w": jnp.ones(3), "b": jnp.ones(())}
    other = search.begin({"w": jnp.ones(3)})
    with pytest.raises(ValueError, match="`state` was built by begin"):
        jax.jit(search.step, static_argnums=0)(f, params, params, state=other)
    with pytest.raises(ValueError, match="`direction` must have the pytree structure"):
        search.step(f, params, [jnp.ones(3), jnp.ones(())], state=search.begin(params))
    with pytest.raises(ValueError, match="`gradient` must have the leaf shapes"):
        search.step(f, params, params, gradient={"w": jnp.ones(2), "b": jnp.ones(())},
                    state=search.begin(params))
    with pytest.raises(TypeError, match="`state` must be the SearchState"):
        search.step(f, params, params, state=lj.lbfgs().begin(params))
    direction = lj.lbfgs()
    with pytest.raises(ValueError, match="`state` was built by begin"):
        direction.propose(params, params, direction.begin([jnp.ones(3)]))
    with pytest.raises(ValueError, match="L-BFGS buffers"):
        direction.propose(params, params, direction.begin({"w": jnp.ones(2), "b": jnp.ones(())}))


def test_non_float_parameters_raise():
    with pytest.raises(TypeError, match="floating-point"):
        lj.armijo().begin(jnp.array([1, 2]))
    with pytest.raises(TypeError, match="scalar"):
        lj.armijo().step(lambda x: x, jnp.ones(2), -jnp.ones(2), state=lj.armijo().begin(
            jnp.ones(2)))


# ------------------------------------------------------- options and records


@pytest.mark.parametrize("factory, host", [
    (lj.armijo, linestep.Armijo), (lj.nonmonotone_armijo, NonmonotoneArmijo),
    (lj.wolfe, Wolfe), (lj.barzilai_borwein, BarzilaiBorwein), (lj.lbfgs, LBFGS),
])
def test_defaults_are_the_host_defaults(factory, host):
    ours = inspect.signature(factory).parameters
    theirs = inspect.signature(host.__init__).parameters
    shared = set(ours) & set(theirs) - {"self", "globalize"}
    assert shared
    for name in shared:
        assert ours[name].default == theirs[name].default, name


@pytest.mark.parametrize("call, error, argument", [
    (lambda: lj.armijo(c1=1.5), ValueError, "c1"),
    (lambda: lj.armijo(shrink_limits=(0.6, 0.5)), ValueError, "shrink_limits"),
    (lambda: lj.armijo(interpolation="linear"), ValueError, "interpolation"),
    (lambda: lj.armijo(initial=-1.0), ValueError, "initial"),
    (lambda: lj.armijo(initial=object()), TypeError, "initial"),
    (lambda: lj.armijo(fused=1), TypeError, "fused"),
    (lambda: lj.nonmonotone_armijo(eta=2.0), ValueError, "eta"),
    (lambda: lj.wolfe(c1=0.5, c2=0.1), ValueError, "c2"),
    (lambda: lj.wolfe(expand=1.0), ValueError, "expand"),
    (lambda: lj.fixed(0.0), ValueError, "size"),
    (lambda: lj.schedule(0.1), TypeError, "function"),
    (lambda: lj.barzilai_borwein(variant="mixed"), ValueError, "variant"),
    (lambda: lj.barzilai_borwein(globalize=linestep.Armijo()), TypeError, "globalize"),
    (lambda: lj.lbfgs(memory=0), ValueError, "memory"),
    (lambda: lj.descend(jnp.sum, jnp.ones(2), search=linestep.Armijo()), TypeError, "search"),
    (lambda: lj.descend(jnp.sum, jnp.ones(2), direction=LBFGS()), TypeError, "direction"),
    (lambda: lj.descend(jnp.sum, jnp.ones(2), max_iterations=-1), ValueError,
     "max_iterations"),
    (lambda: lj.descend(jnp.sum, jnp.ones(2), gradient_rtol=1.0), ValueError,
     "gradient_rtol"),
])
def test_bad_arguments_name_the_argument(call, error, argument):
    with pytest.raises(error, match=f"`{argument}`"):
        call()


def test_searches_are_hashable_and_their_repr_rebuilds_them():
    namespace = {name: getattr(lj, name) for name in lj.__all__}
    namespace.update(PreviousTrial=PreviousTrial, ScaledTrial=ScaledTrial,
                     UnitTrial=linestep.UnitTrial, QuadraticTrial=QuadraticTrial,
                     inf=math.inf)
    for search in (lj.armijo(c1=1e-3, initial=PreviousTrial(growth=2.0)),
                   lj.nonmonotone_armijo(reference="average"), lj.wolfe(strong=False),
                   lj.barzilai_borwein(globalize=None), lj.fixed(0.5), lj.lbfgs(memory=4)):
        assert eval(repr(search), namespace) == search  # noqa: S307 - our own repr
        assert hash(search) == hash(eval(repr(search), namespace))  # noqa: S307


def test_status_codes_carry_the_host_status_names():
    for code in lj.StatusCode:
        assert code.status.name == code.name
    assert {r.kind.value for r in lj.Reason} == {"converged", "budget", "failed"}


def test_verdict_of_a_batch_asks_for_one_run():
    starts = jnp.stack([jnp.ones(2), 2 * jnp.ones(2)])
    batch = jax.vmap(lambda x: lj.descend(lambda v: jnp.sum(v ** 2), x))(starts)
    with pytest.raises(ValueError, match="Index it first"):
        batch.verdict()
    first = jax.tree_util.tree_map(lambda a: a[0], batch)
    assert first.verdict().kind.value == "converged"
