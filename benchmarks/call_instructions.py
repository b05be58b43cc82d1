"""Instructions per search call, counted by valgrind's callgrind: a deterministic cost.

Timings of a ~7 us call drift by ±5% between runs on a shared machine, which
hides the effect of most hot-path changes. Instruction counts do not drift:
this script runs the accepted-unit-step case of `curvature_searches.py` (n = 10
quadratic, Newton direction, value and gradient supplied) under callgrind with
two call counts and reports the difference per call, for each search and for
`scipy.optimize.line_search`. Instructions are not time (numpy's C code and the
interpreter run at different rates), so compare a change against the previous
commit with this script and confirm the final figure with the timing script.

Needs valgrind on the PATH. Run: ``python benchmarks/call_instructions.py``
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import sys

CALLS_LOW, CALLS_HIGH = 200, 1200
NAMES = ("Wolfe", "MoreThuente", "HagerZhang", "scipy")


def workload(name: str, calls: int) -> None:
    import numpy as np
    from scipy.optimize import line_search

    import linestep

    rng = np.random.default_rng(3)
    n = 10
    q, _ = np.linalg.qr(rng.standard_normal((n, n)))
    a = q @ np.diag(np.linspace(0.9, 1.1, n)) @ q.T

    def fun(x):
        return 0.5 * float(x @ (a @ x))

    def grad(x):
        return a @ x

    x = rng.standard_normal(n)
    g, value = grad(x), fun(x)
    d = -np.linalg.solve(a, g)
    if name == "scipy":
        def call():
            return line_search(fun, grad, x, d, gfk=g, old_fval=value)
    else:
        search, objective = getattr(linestep, name)(), linestep.Objective(fun, grad)

        def call():
            return search(objective, x, d, value=value, gradient=g)
    for _ in range(50 + calls):  # 50 warm-up calls specialise the bytecode
        call()


def instructions(name: str, calls: int) -> int:
    # A fixed hash seed and one BLAS thread make the count reproducible (OpenBLAS's
    # idle threads spin, and their instructions are counted too).
    env = dict(os.environ, PYTHONHASHSEED="0", OPENBLAS_NUM_THREADS="1",
               OMP_NUM_THREADS="1", MKL_NUM_THREADS="1")
    result = subprocess.run(
        ["valgrind", "--tool=callgrind", "--callgrind-out-file=/dev/null", sys.executable,
         __file__, "--workload", name, str(calls)],
        env=env, capture_output=True, text=True, check=True)
    match = re.search(r"Collected\s*:\s*(\d+)", result.stderr)
    if match is None:
        raise RuntimeError(f"no instruction count in valgrind's output:\n{result.stderr}")
    return int(match.group(1))


def main() -> None:
    if len(sys.argv) == 4 and sys.argv[1] == "--workload":
        workload(sys.argv[2], int(sys.argv[3]))
        return
    if shutil.which("valgrind") is None:
        sys.exit("valgrind is not installed; this script counts instructions with callgrind.")
    counts = {}
    for name in NAMES:
        low, high = instructions(name, CALLS_LOW), instructions(name, CALLS_HIGH)
        counts[name] = (high - low) / (CALLS_HIGH - CALLS_LOW)
    print("Instructions per call, unit step accepted (n = 10 quadratic), callgrind:")
    for name in NAMES:
        print(f"  {name:<12} {counts[name]:9,.0f}   ratio to scipy "
              f"{counts[name] / counts['scipy']:.3f}")


if __name__ == "__main__":
    main()
