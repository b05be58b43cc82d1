"""Time per iteration: compiled L-BFGS + Wolfe (`linestep.jax.descend`) against the host loop.

On the extended Rosenbrock function (Moré–Garbow–Hillstrom problem 21, standard
start) at n = 10, 1e3 and 1e5, in float64, one process, CPU:

* **compiled**: ``linestep.jax.descend(f, x0, search=wolfe(), direction=lbfgs())``,
  the whole run one XLA computation, gradients by autodiff; timed after a
  warm-up call that compiles it;
* **host**: ``linestep.descend`` with ``Wolfe()`` and ``LBFGS()`` on the numpy
  problem with its analytic gradient (`linestep.bench`);
* **scipy**: ``scipy.optimize.minimize(method="L-BFGS-B")`` on the same numpy
  function returning (f, ∇f), memory 10 as the others.

All three stop at ‖∇f‖∞ ≤ 1e-6 (scipy: ``gtol=1e-6``, its projected gradient is
the gradient here, and ``ftol=0`` so that only the gradient test stops it) or
after a cap on the iterations. Each figure is the median over repeats of
(wall time of one run) / (its iterations). Evaluation counts are printed beside
the times: the searches differ (scipy uses its own line search), so iterations
and evaluations are not identical across columns.

Targets (JAX issue): compiled >= 5x faster per iteration than host at n = 10;
compiled no slower per iteration than scipy's L-BFGS-B at n = 1e5.

Run: ``python benchmarks/jax_loop.py [--repeats N] [--sizes 10 1000 100000]``
"""

from __future__ import annotations

import argparse
import statistics
import time

import jax

jax.config.update("jax_enable_x64", True)  # this script's own process only

import jax.numpy as jnp  # noqa: E402
import numpy as np  # noqa: E402
from scipy.optimize import minimize  # noqa: E402
from scipy_peers import MEMORY, lbfgsb_options, lbfgsb_settings  # noqa: E402

import linestep  # noqa: E402
import linestep.jax as lj  # noqa: E402
from linestep import stopping  # noqa: E402
from linestep.bench import get_problem  # noqa: E402
from linestep.directions import LBFGS  # noqa: E402
from linestep.jax._problems import extended_rosenbrock  # noqa: E402
from linestep.searches.wolfe import Wolfe  # noqa: E402

GRADIENT_ATOL = 1e-6
MAX_ITERATIONS = 2000


def time_compiled(x0: np.ndarray) -> tuple[float, int, int]:
    start = jnp.asarray(x0)

    def run():
        result = lj.descend(extended_rosenbrock, start, search=lj.wolfe(),
                            direction=lj.lbfgs(MEMORY), max_iterations=MAX_ITERATIONS,
                            gradient_atol=GRADIENT_ATOL, gradient_rtol=0.0)
        jax.block_until_ready(result)
        return result

    run()  # compile
    began = time.perf_counter()
    result = run()
    elapsed = time.perf_counter() - began
    iterations = int(result.iterations)
    return elapsed / max(iterations, 1), iterations, int(result.values)


def time_host(problem: linestep.bench.Problem, x0: np.ndarray) -> tuple[float, int, int]:
    stop = (stopping.GradientNorm(atol=GRADIENT_ATOL, rtol=0.0)
            | stopping.MaxIterations(MAX_ITERATIONS))
    began = time.perf_counter()
    run = linestep.descend(problem.objective(), x0.copy(), controller=Wolfe(),
                           direction=LBFGS(MEMORY), stop=stop)
    elapsed = time.perf_counter() - began
    return elapsed / max(run.iterations, 1), run.iterations, run.evaluations.values


def time_scipy(problem: linestep.bench.Problem, x0: np.ndarray) -> tuple[float, int, int]:
    began = time.perf_counter()
    result = minimize(problem.value_and_gradient, x0.copy(), jac=True, method="L-BFGS-B",
                      options=lbfgsb_options(GRADIENT_ATOL, MAX_ITERATIONS))
    elapsed = time.perf_counter() - began
    return elapsed / max(result.nit, 1), result.nit, result.nfev


def measure(n: int, repeats: int) -> dict[str, tuple[float, int, int]]:
    problem = get_problem("extended_rosenbrock", dimension=n)
    x0 = np.array(problem.start)
    rounds: dict[str, list[tuple[float, int, int]]] = {"compiled": [], "host": [], "scipy": []}
    for _ in range(repeats):  # alternate, so drift in machine speed hits all three
        rounds["compiled"].append(time_compiled(x0))
        rounds["host"].append(time_host(problem, x0))
        rounds["scipy"].append(time_scipy(problem, x0))
    return {name: (statistics.median(r[0] for r in runs), runs[0][1], runs[0][2])
            for name, runs in rounds.items()}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--sizes", type=int, nargs="+", default=[10, 1_000, 100_000])
    args = parser.parse_args()
    print(f"extended Rosenbrock, float64, L-BFGS (m = {MEMORY}); medians over "
          f"{args.repeats} repeats; JAX {jax.__version__} on {jax.default_backend()}")
    print(f"  stop ‖∇f‖∞ ≤ {GRADIENT_ATOL:g} or {MAX_ITERATIONS} iterations; "
          + lbfgsb_settings(f"{GRADIENT_ATOL:g}", MAX_ITERATIONS))
    header = (f"{'n':>8}  {'compiled':>12} {'host':>12} {'scipy':>12}   "
              f"{'host/comp':>9} {'scipy/comp':>10}   iterations (c/h/s)   values (c/h/s)")
    print(header)
    for n in args.sizes:
        result = measure(n, args.repeats)
        (tc, ic, vc), (th, ih, vh), (ts, is_, vs) = (result["compiled"], result["host"],
                                                    result["scipy"])
        print(f"{n:>8}  {tc * 1e6:>9.1f} us {th * 1e6:>9.1f} us {ts * 1e6:>9.1f} us   "
              f"{th / tc:>9.1f} {ts / tc:>10.2f}   {ic:>5}/{ih:>5}/{is_:>5}      "
              f"{vc:>5}/{vh:>5}/{vs:>5}")
    print("targets: host/comp >= 5 at n = 10; scipy/comp >= 1 at n = 1e5 (per iteration)")


if __name__ == "__main__":
    main()
