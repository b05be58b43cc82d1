"""The host path with JAX arrays: every controller and `descend` keep the array type and dtype.

DESIGN.md §4: "the dtype of `x` is kept (float32 stays float32)", numpy, JAX and
other Array-API arrays work the same. Each controller is called on the same
problem with numpy and with JAX arrays and must take the same step. Also
`linestep.jax.objective` (the gradient by autodiff), checked against the
analytic gradients of the Moré–Garbow–Hillstrom problems in `linestep.bench`.
"""

from __future__ import annotations

import importlib
import math
import pkgutil
import warnings

import numpy as np
import pytest

jax = pytest.importorskip("jax", reason="the jax extra is not installed")
import jax.numpy as jnp  # noqa: E402

import linestep  # noqa: E402
import linestep.rules  # noqa: E402
import linestep.searches  # noqa: E402
from linestep import Objective, Status  # noqa: E402
from linestep._controller import StepController  # noqa: E402
from linestep.bench import get_problem  # noqa: E402
from linestep.directions import LBFGS, NonlinearCG, SteepestDescent  # noqa: E402
from linestep.jax import objective  # noqa: E402

# How to build a controller whose constructor needs arguments (others: cls()).
FACTORIES = {
    "Fixed": lambda cls: cls(0.1),
    "Schedule": lambda cls: cls.exponential(0.2, rate=0.9),
    "Polyak": lambda cls: cls(f_min=0.0),
    "Fallback": lambda cls: cls(linestep.Fixed(0.1), linestep.Armijo()),
}


def _controller_classes() -> dict[str, type]:
    """Every public StepController subclass in linestep.searches and linestep.rules."""
    found = {}
    for package in (linestep.searches, linestep.rules):
        for module_info in pkgutil.iter_modules(package.__path__):
            module = importlib.import_module(f"{package.__name__}.{module_info.name}")
            for name in getattr(module, "__all__", ()):
                obj = getattr(module, name)
                if isinstance(obj, type) and issubclass(obj, StepController):
                    found[name] = obj
    return found


CLASSES = _controller_classes()
DTYPES = [np.float32, np.float64]
SCALE = np.array([1.0, 3.0, 0.5, 2.0])


def build(name):
    cls = CLASSES[name]
    return FACTORIES.get(name, lambda c: c())(cls)


def bowl(xp):
    """f(x) = ½·Σ s_i (x_i − 1)² in the array library `xp`; minimiser all ones."""
    def fun(x):
        r = x - 1.0
        return 0.5 * float(xp.sum(xp.asarray(SCALE, dtype=x.dtype) * r * r))

    def grad(x):
        return xp.asarray(SCALE, dtype=x.dtype) * (x - 1.0)

    return fun, grad


def test_the_expected_controllers_are_discovered():
    assert {"Armijo", "Goldstein", "Fixed", "Fallback"} <= set(CLASSES)


@pytest.mark.parametrize("dtype", DTYPES, ids=lambda d: np.dtype(d).name)
@pytest.mark.parametrize("name", sorted(CLASSES))
@pytest.mark.parametrize("supplied", [True, False], ids=["f_and_g_given", "evaluated"])
def test_jax_arrays_in_give_the_numpy_step_and_jax_arrays_out(name, dtype, supplied):
    results = {}
    for xp, convert in ((np, np.asarray), (jnp, jnp.asarray)):
        fun, grad = bowl(xp)
        x = convert(np.array([3.0, -1.0, 2.0, 0.5]), dtype=dtype)
        g = grad(x)
        extra = {"value": fun(x), "gradient": g} if supplied else {}
        results[xp.__name__] = build(name)((fun, grad), x, -g, **extra)
    host, traced = results["numpy"], results["jax.numpy"]
    assert isinstance(traced.x, jax.Array)
    assert traced.x.dtype == dtype and traced.x.shape == (4,)
    if traced.gradient is not None:
        assert isinstance(traced.gradient, jax.Array) and traced.gradient.dtype == dtype
    assert isinstance(traced.value, float)
    assert traced.status is host.status
    assert traced.evaluations == host.evaluations
    tolerance = 1e-5 if dtype is np.float32 else 1e-12
    assert traced.size == pytest.approx(host.size, rel=tolerance)
    np.testing.assert_allclose(np.asarray(traced.x), host.x, rtol=tolerance, atol=tolerance)


@pytest.mark.parametrize("name", sorted(CLASSES))
def test_matrix_parameters_keep_their_shape(name):
    fun = lambda x: float(jnp.sum((x - 1.0) ** 2))  # noqa: E731
    grad = lambda x: 2.0 * (x - 1.0)  # noqa: E731
    x = jnp.zeros((2, 3), dtype=jnp.float32)
    step = build(name)((fun, grad), x, -grad(x), value=fun(x), gradient=grad(x))
    assert step.ok and step.x.shape == (2, 3) and step.x.dtype == jnp.float32


@pytest.mark.parametrize("name", sorted(CLASSES))
def test_non_finite_values_along_the_ray_never_reach_x(name):
    # f is NaN once x leaves the box |x_i| < 2 (invented); the unit step leaves it.
    def fun(x):
        return float(jnp.where(jnp.max(jnp.abs(x)) < 2.0, jnp.sum(x * x), jnp.nan))

    def grad(x):
        return 2.0 * x

    x = jnp.array([1.0, -1.5])
    d = -10.0 * grad(x) if name not in ("BarzilaiBorwein", "Polyak") else -grad(x)
    step = build(name)((fun, grad), x, d, value=fun(x), gradient=grad(x))
    assert bool(jnp.all(jnp.isfinite(step.x)))
    assert math.isfinite(step.value)
    if step.ok:
        assert step.value <= fun(x) or name in ("Fixed", "Schedule", "Polyak")


@pytest.mark.parametrize("dtype", DTYPES, ids=lambda d: np.dtype(d).name)
@pytest.mark.parametrize("direction", [SteepestDescent, LBFGS, NonlinearCG])
def test_descend_keeps_type_and_dtype(direction, dtype):
    fun, grad = bowl(jnp)
    x0 = jnp.zeros(4, dtype=dtype)
    controller = linestep.Armijo() if direction is SteepestDescent else linestep.Wolfe()
    run = linestep.descend((fun, grad), x0, controller=controller, direction=direction(),
                           stop=linestep.stopping.GradientNorm(atol=1e-4, rtol=0.0)
                           | linestep.stopping.MaxIterations(500))
    assert run.converged, run.verdict
    assert isinstance(run.x, jax.Array) and run.x.dtype == dtype
    assert isinstance(run.gradient, jax.Array) and run.gradient.dtype == dtype
    np.testing.assert_allclose(np.asarray(run.x), np.ones(4), atol=1e-3)


def test_integer_jax_input_becomes_the_default_float_without_warnings(x64_off):
    fun, grad = bowl(jnp)
    x = jnp.array([3, -1, 2, 0])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        step = linestep.Armijo()((fun, grad), x, -grad(x.astype(jnp.float32)))
    assert step.x.dtype == jnp.float32  # JAX's default float with x64 off


def test_integer_jax_input_becomes_float64_with_x64_on():
    fun, grad = bowl(jnp)
    x = jnp.array([3, -1, 2, 0])
    step = linestep.Armijo()((fun, grad), x, -grad(x.astype(jnp.float64)))
    assert step.x.dtype == jnp.float64


def test_a_host_controller_inside_jit_says_where_to_look():
    fun, grad = bowl(jnp)

    @jax.jit
    def inside(x):
        return linestep.Armijo()((fun, grad), x, -grad(x)).x

    with pytest.raises(TypeError, match="traced JAX value.*linestep.jax"):
        inside(jnp.zeros(4))


# -- linestep.jax.objective ------------------------------------------------------


def test_objective_fused_counts_one_of_each_per_call():
    counted = objective(lambda x: jnp.sum((x - 1.0) ** 2))
    step = linestep.Armijo()(counted, jnp.zeros(3), jnp.ones(3))
    assert step.status is Status.accepted and step.size == 1.0
    # f and ∇f at x, then the unit trial (N&W Alg. 3.1 accepts it at once).
    assert step.evaluations == linestep.Evaluations(values=2, gradients=2)


def test_objective_unfused_evaluates_values_only_in_backtracking():
    counted = objective(lambda x: jnp.sum((x - 1.0) ** 2), fused=False)
    x = jnp.zeros(3)
    step = linestep.Armijo()(counted, x, 4.0 * jnp.ones(3), value=3.0,
                             gradient=-2.0 * jnp.ones(3))
    assert step.ok
    assert step.evaluations.gradients == 0 and step.evaluations.values >= 2


@pytest.mark.parametrize("dtype", DTYPES, ids=lambda d: np.dtype(d).name)
def test_objective_keeps_a_numpy_point_numpy(dtype):
    counted = objective(lambda x: jnp.sum(x ** 2))
    value, gradient = counted.value_and_gradient(np.array([1.0, 2.0], dtype=dtype))
    assert isinstance(gradient, np.ndarray) and gradient.dtype == dtype
    assert value == 5.0
    run = linestep.descend(counted, np.array([1.0, 2.0], dtype=dtype))
    assert isinstance(run.x, np.ndarray) and run.x.dtype == dtype


def test_objective_rejects_bad_arguments():
    with pytest.raises(TypeError, match="`fun`"):
        objective(3.0)
    with pytest.raises(TypeError, match="`fused`"):
        objective(jnp.sum, fused="yes")


def test_missing_gradient_message_points_to_autodiff():
    with pytest.raises(TypeError, match=r"linestep\.jax\.objective"):
        Objective(lambda x: 0.0).gradient(np.zeros(2))


@pytest.mark.parametrize("name", ["rosenbrock", "beale", "wood", "extended_rosenbrock"])
def test_autodiff_gradient_equals_the_analytic_one(name):
    # MGH 1981 problems 1, 5, 14, 21: analytic gradients 2·J(x)ᵀF(x) in linestep.bench.
    from linestep.jax import _problems

    problem = get_problem(name)
    counted = objective(getattr(_problems, name))
    rng = np.random.default_rng(7)
    for x in [problem.start, problem.start + rng.standard_normal(problem.dimension)]:
        value, gradient = counted.value_and_gradient(np.array(x))
        assert value == pytest.approx(problem.value(x), rel=1e-13)
        np.testing.assert_allclose(gradient, problem.gradient(x), rtol=1e-12, atol=1e-12)
