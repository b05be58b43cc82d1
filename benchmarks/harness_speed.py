"""Wall time of the default study (`linestep bench` defaults) and the harness's overhead per run.

Runs the default suite with the default controllers and directions (the study
`linestep bench` runs with no arguments), writing each run to a fresh SQLite
file as the command does, in three set-ups:

* ``in-process``: ``workers=1``, every run in this process (no pool);
* ``pool-1``: a process pool of one worker (the pool's cost without parallelism);
* ``pool-2``: a process pool of two workers (the default on a 2-core machine).

For each it reports the wall time, the speed-up over ``in-process``, and a
split of the time per run:

* objective: seconds inside the objective's callables (the harness wraps them
  with timers);
* controller + loop: the rest of each run's own time (`descend`, the
  controller, the direction, the stopping rule);
* harness: wall time × workers / runs minus the two above: dispatching,
  pickling, SQLite commits, building the study (per worker-second, so it is
  comparable across set-ups).

Run: ``python benchmarks/harness_speed.py [--repeat N]``: N rounds, the set-ups alternating
within each round; the fastest of the N is kept for each set-up.
"""

from __future__ import annotations

import argparse
import os
import tempfile
import time
from concurrent.futures import ProcessPoolExecutor

from linestep import cli
from linestep.bench import run_study


def default_study():
    args = cli.build_parser().parse_args(["bench"])
    return cli.build_study(args, lambda text: None)


def measure(setup: str) -> dict[str, float]:
    study = default_study()
    with tempfile.TemporaryDirectory() as out:
        started = time.perf_counter()
        if setup == "in-process":
            results, workers = run_study(study, out, workers=1), 1
        elif setup == "pool-1":
            with ProcessPoolExecutor(max_workers=1) as pool:
                results, workers = run_study(study, out, executor=pool, workers=1), 1
        else:
            results, workers = run_study(study, out, workers=2), 2
        wall = time.perf_counter() - started
    runs = len(results)
    objective = sum(r.objective_seconds for r in results)
    inside = sum(r.seconds for r in results)
    return {"wall": wall, "runs": runs, "objective": objective / runs,
            "loop": (inside - objective) / runs,
            "harness": (wall * workers - inside) / runs}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=1)
    args = parser.parse_args()
    print(f"CPUs: {os.cpu_count()}; default study: {len(default_study().tasks())} runs")
    setups = ("in-process", "pool-1", "pool-2")
    trials: dict[str, list[dict[str, float]]] = {setup: [] for setup in setups}
    for _ in range(args.repeat):  # alternate set-ups in each round: drift hits all alike
        for setup in setups:
            trials[setup].append(measure(setup))
    rows = {setup: min(trials[setup], key=lambda row: row["wall"]) for setup in setups}
    base = rows["in-process"]["wall"]
    print(f"{'set-up':<11} {'wall s':>7} {'speed-up':>8} {'objective ms/run':>17} "
          f"{'controller+loop ms/run':>23} {'harness ms/run':>15}")
    for setup, row in rows.items():
        print(f"{setup:<11} {row['wall']:7.2f} {base / row['wall']:8.2f} "
              f"{1e3 * row['objective']:17.2f} {1e3 * row['loop']:23.2f} "
              f"{1e3 * row['harness']:15.2f}")


if __name__ == "__main__":
    main()
