"""`advise`: a short budgeted study on the user's objective, then one recommendation."""

from __future__ import annotations

import math
import pickle
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import Any

import numpy as np

from linestep import _validate, stopping
from linestep._objective import Objective
from linestep.advice._candidates import SetUp, setups_for
from linestep.advice._progress import close, reporter, shifted
from linestep.advice._smoothness import Smoothness, estimate_smoothness
from linestep.bench._rule import Standing, standings

__all__ = ["Advice", "advise"]

# Total evaluations (values + gradients) a study may spend when `budget` is not given:
# a few seconds for an objective that costs 0.1 ms, a minute or so at 1 ms.
DEFAULT_BUDGET = 50_000
# Fewest evaluations a run may get; a smaller share means the budget is too small.
MIN_RUN_EVALUATIONS = 40
# The first round gets this fraction of the budget; when no set-up solves from every start,
# the rest goes to the FINALISTS most promising set-ups (no failed run, least gap left),
# then by successive halving to the best of them, each round at least doubling the share
# per run (`_next_round`).
FIRST_ROUND_FRACTION = 0.5
FINALISTS = 3
# Room left in each run's share for its last iteration (checked once per iteration).
ITERATION_ALLOWANCE = 10
# Relative size of the perturbed starts: x0 + NOISE·max(1, ‖x0‖∞)·z, z standard normal.
START_NOISE = 0.1

_LOOPS = ("any", "steepest", "quasi_newton")


@dataclass(frozen=True, kw_only=True)
class Advice:
    """The recommendation of `advise`.

    Attributes
    ----------
    controller, direction
        Fresh instances of the recommended set-up, ready to use. When no set-up
        solved from any start, the one that came closest (see `tentative`), or
        None when no set-up made progress without a failed run.
    code : str or None
        One line of Python that builds both, e.g. ``"BarzilaiBorwein(), SteepestDescent()"``
        (``controller, direction = eval(code)`` after ``from linestep import *``).
    reasons : tuple of str
        Sentences with the evidence: solved fraction and median evaluations,
        against the runner-up and the best fixed rate, and the smoothness estimate.
    avoid : tuple of str
        Each set-up that did not solve from every start, with what went wrong.
    smoothness : Smoothness
        The estimate at x0 that set the fixed rates.
    study : linestep.bench.Results
        Every run of the study.
    standings : tuple of Standing
        Every set-up, best first by the rule (`linestep.bench._rule`).
    evaluations : int
        Evaluations of the smoothness probe plus every run of every round (runs
        found already finished in `out` count what they spent then).
    budget : int
        The budget the study was given.
    loop : str
    tentative : bool
        True when no set-up solved from any start and `code` names the one that
        came closest instead: no failed run and the least median fraction left of
        the gap between the start value and the reference (the known minimum, else
        the best value reached): a lead to confirm with a larger `budget`, not a
        result. `found` is then False.
    """

    controller: Any
    direction: Any
    code: str | None
    reasons: tuple[str, ...]
    avoid: tuple[str, ...]
    smoothness: Smoothness
    study: Any
    standings: tuple[Standing, ...] = field(repr=False)
    evaluations: int
    budget: int
    loop: str
    tentative: bool = False

    @property
    def found(self) -> bool:
        """True when some set-up solved from at least one start."""
        return self.code is not None and not self.tentative

    def __str__(self) -> str:
        lines = [self.code if self.found else "No set-up solved the problem from any start."]
        if self.tentative:
            lines.append(f"Closest (unconfirmed): {self.code}")
        lines += [f"  {reason}" for reason in self.reasons]
        if self.avoid:
            lines.append("Avoid:")
            lines += [f"  {item}" for item in self.avoid]
        return "\n".join(lines)

    def to_dict(self) -> dict[str, Any]:
        """Plain data for JSON: the code, the sentences, the smoothness and the standings."""
        s = self.smoothness
        return {
            "code": self.code, "tentative": self.tentative, "loop": self.loop,
            "reasons": list(self.reasons),
            "avoid": list(self.avoid), "evaluations": self.evaluations, "budget": self.budget,
            "smoothness": {"lipschitz": s.lipschitz, "safe_rate": s.safe_rate,
                           "limit_rate": s.limit_rate, "status": s.status,
                           "message": s.message, "gradient_evaluations": s.evaluations.gradients},
            "standings": [{"controller": r.controller, "direction": r.direction,
                           "runs": r.runs, "solved": r.solved, "median_evaluations": r.median,
                           "failures": dict(r.failures)} for r in self.standings],
        }


def advise(objective: Any, x0: Any = None, *, loop: str = "any", budget: int | None = None,
           starts: int = 5, seed: int | Sequence[int] = 0, workers: int = 1,
           f_min: float | None = None, out: str | Path | None = None,
           progress: Any = None) -> Advice:
    """Run a short study on your objective and recommend a step-size controller.

    The study runs every set-up that fits `loop` from x0 and from ``starts − 1``
    seeded perturbed starts (x0 + 0.1·max(1, ‖x0‖∞)·z) through `linestep.bench`
    (its storage, executors and resume), then applies the rule *robustness first,
    then cost*: the set-up solving from the most starts, then with the fewest
    median evaluations (`linestep.bench._rule`).

    The study runs in rounds. The first gives every run an equal share of half
    the budget. When no set-up solved from every start, the rest of the budget
    goes to the most promising set-ups by successive halving: the three most
    promising (no failed run; the least median fraction of the gap f − f_ref
    left; the best of each direction family first), then the better half of
    those, and so on, each round at least doubling the share per run and
    keeping half of what is left for the next (the last takes all of it); the
    runs of each round replace the same set-up's earlier runs. The rounds stop
    when a set-up solves from every start, when a set-up left behind solved
    from more starts than any still in, or when the budget cannot double the
    share again.

    Set-ups tried along the negative gradient: fixed rates 0.5/L̂, 1/L̂ and 1.8/L̂
    from `estimate_smoothness` at x0, an inverse-time schedule from 1/L̂,
    `Armijo`, `Wolfe`, `HagerZhang`, `MoreThuente`, `NonmonotoneArmijo`,
    `BarzilaiBorwein` (alternating, and long steps only), `Polyak` (when `f_min`
    is known) and
    ``Fallback(Fixed(1.8/L̂), Armijo())``. With `LBFGS`: the unit step, `Armijo`,
    `Wolfe`, `MoreThuente` and `HagerZhang`.
    With `NonlinearCG`: `Wolfe`, `HagerZhang`, `MoreThuente`.

    Parameters
    ----------
    objective : Objective, (fun, grad), or a linestep.bench Problem
        Needs a gradient. A `Problem` brings its own start and optimal value.
    x0 : array_like
        The start (any shape); a Problem's start when left out.
    loop : {"any", "steepest", "quasi_newton"}
        What your loop can do: only the negative gradient (``"steepest"``), an
        L-BFGS direction (``"quasi_newton"``), or anything (``"any"``: steepest
        descent, L-BFGS and nonlinear CG).
    budget : int, optional
        Total evaluations (values + gradients) for the whole study, the
        smoothness probe included; default `DEFAULT_BUDGET` (50,000). A run may
        overshoot its share by its last iteration (a few evaluations).
    starts : int
        x0 plus ``starts − 1`` perturbed starts.
    seed : int or sequence of int
        Seed of the probe; the perturbed starts use seeds ``seed, seed + 1, ...``,
        or the seeds given as a sequence (then ``starts = 1 + len(seed)``).
    workers : int
        Worker processes (1 runs here; an objective that cannot be sent to other
        processes runs here too).
    f_min : float, optional
        The optimal value when known: adds `Polyak` and judges runs against it.
    out : path, optional
        Folder for ``results.sqlite``: runs finished there are not repeated.
    progress : bool or callable, optional
        True shows a progress bar (tqdm when installed, else a line per tenth on
        stderr); a callable gets ``(done, total, record)``; None shows a bar only
        when stderr is a terminal and tqdm is installed; False shows nothing.

    Returns
    -------
    Advice
        When no set-up solves from any start, ``found`` is False and ``reasons``
        say so, with the smoothness estimate; ``avoid`` lists every failure. If
        some set-ups still made progress without a failed run, the closest is
        given as a lead (``tentative`` True, ``controller``, ``direction`` and
        ``code`` set); otherwise those three are None. Runs whose objective
        raised are failures with the error in ``avoid``.

    Raises
    ------
    ValueError, TypeError
        Bad arguments, or a budget too small for the study (the message says the
        least that works).

    Examples
    --------
    An invented fit: a 3-parameter quadratic bowl with one steep direction.

    >>> import numpy as np
    >>> from linestep import advise
    >>> scales = np.array([1.0, 4.0, 400.0])
    >>> f = lambda w: 0.5 * float(scales @ (w - 1.0) ** 2)
    >>> g = lambda w: scales * (w - 1.0)
    >>> advice = advise((f, g), np.zeros(3), loop="steepest", starts=2, budget=6000)
    >>> advice.found, type(advice.direction).__name__
    (True, 'SteepestDescent')
    >>> round(advice.smoothness.lipschitz)
    400
    """
    loop = _validate.choice("loop", loop, _LOOPS)
    workers = _validate.integer("workers", workers)
    seeds, probe_seed = _seeds(seed, starts)
    problem = _problem(objective, x0, f_min)
    from linestep.bench import Results, Start

    smoothness = _probe(problem, probe_seed)
    setups = setups_for(loop, smoothness, problem)
    count = 1 + len(seeds)
    runs = len(setups) * count
    budget = DEFAULT_BUDGET if budget is None else _validate.integer("budget", budget)
    available = budget - smoothness.evaluations.total
    share = int(available * FIRST_ROUND_FRACTION) // runs - ITERATION_ALLOWANCE
    if share < MIN_RUN_EVALUATIONS:
        least = smoothness.evaluations.total + math.ceil(
            runs * (MIN_RUN_EVALUATIONS + ITERATION_ALLOWANCE) / FIRST_ROUND_FRACTION)
        raise ValueError(f"`budget` of {budget} evaluations is too small for {runs} runs "
                         f"({len(setups)} set-ups × {count} starts); give at least "
                         f"{least}, or fewer `starts`.")
    if workers > 1 and not _travels(problem):
        workers = 1  # the harness would refuse: functions defined in place do not pickle
    rounds = partial(_round, problem, [Start.standard()] + (
        [Start.perturbed(START_NOISE)] if seeds else []), seeds or (0,), out, workers)
    report = reporter(progress, runs)
    try:
        records = rounds(setups, share, report, 0, runs)
        spent = smoothness.evaluations.total + sum(r.evaluations for r in records)
        results = Results(records)
        done, candidates = runs, _finalists(results, setups)
        while candidates:
            # no set-up solved from every start: the most promising get more (module notes)
            left = budget - spent
            candidates, larger = _next_round(candidates, left, count, share)
            if not candidates:
                break
            again = rounds(candidates, larger, report, done, done + len(candidates) * count)
            done += len(candidates) * count
            spent += sum(r.evaluations for r in again)
            replaced = {(s.controller, s.direction) for s in candidates}
            records = [r for r in records if (r.controller, r.direction) not in replaced]
            records += again
            results = Results(records, solve_rtol=results.solve_rtol)
            share = larger
            candidates = _finalists(results, setups, among=candidates)
    finally:
        if report is not None:
            close(report)
    results = Results(records, solve_rtol=results.solve_rtol)
    return _advice(results, setups, smoothness, loop=loop, budget=budget, spent=spent)


def _round(problem: Any, starts: list[Any], seeds: tuple[int, ...], out: Any, workers: int,
           setups: list[SetUp], share: int, report: Any, offset: int,
           total: int) -> list[Any]:
    """Run `setups` from every start with `share` evaluations per run (one Study per
    direction, through the bench harness); return the records."""
    from linestep.bench import Study, run_study

    stop = stopping.default(max_iterations=share, max_evaluations=share)
    families: dict[str, list[SetUp]] = {}
    for setup in setups:
        families.setdefault(setup.direction, []).append(setup)
    records: list[Any] = []
    for direction, members in families.items():
        study = Study(problems=[problem],
                      controllers={s.controller: s.build_controller for s in members},
                      directions={direction: members[0].build_direction},
                      starts=starts, seeds=seeds, stop=stop, exclude=None)
        callback = None if report is None else partial(
            shifted, report, offset + len(records), total)
        records += list(run_study(study, out, workers=workers, progress=callback))
    return records


def _next_round(candidates: list[SetUp], left: int, count: int,
                share: int) -> tuple[list[SetUp], int]:
    """The set-ups of the next round and their share per run, from `left` evaluations.

    Successive halving: the share per run at least doubles from round to round.
    With several candidates, the round takes half of what is left when that doubles
    the share (the other half stays for the best of them), else all of it; when
    even that does not double the share, only the first candidate goes on, with
    everything left. ([], 0) when a single candidate could not double its share."""
    while candidates:
        runs = len(candidates) * count
        whole = left // runs - ITERATION_ALLOWANCE
        half = (left // 2) // runs - ITERATION_ALLOWANCE
        if len(candidates) > 1 and half >= 2 * share:
            return candidates, half
        if whole >= 2 * share:
            return candidates, whole
        if len(candidates) == 1:
            return [], 0
        candidates = candidates[:1]
    return [], 0


def _finalists(results: Any, setups: list[SetUp],
               among: list[SetUp] | None = None) -> list[SetUp]:
    """When no set-up solved from every start: up to FINALISTS set-ups with no failed run,
    ranked by their median remaining fraction of the gap (f − f_ref)/(f₀ − f_ref); the
    best of each direction family first, then the next best, leaving out set-ups whose
    runs ended exactly where a chosen one's did (they behave the same here).

    After a later round, `among` holds that round's set-ups: only they ran with the
    larger share, so the next round takes at most half of them (at least one)."""
    ranked = standings(results)
    if not ranked or ranked[0].solved == ranked[0].runs:
        return []
    if among is not None:
        keep = {(s.controller, s.direction) for s in among}
        if max(r.fraction for r in ranked if (r.controller, r.direction) in keep) < (
                ranked[0].fraction):
            return []  # an earlier set-up solved from more starts than any of these
        setups = [s for s in setups if (s.controller, s.direction) in keep]
        limit = max(1, len(among) // 2)
    else:
        limit = FINALISTS
    gaps, finals = _gaps_left(results, {(s.controller, s.direction) for s in setups})
    order = list(gaps)
    chosen: list[tuple[str, str]] = []
    families: set[str] = set()
    for first_pass in (True, False):
        for key in order:
            if len(chosen) == limit:
                break
            if key in chosen or (first_pass and key[1] in families):
                continue
            if any(finals[key] == finals[other] for other in chosen):
                continue
            chosen.append(key)
            families.add(key[1])
    by_key = {(s.controller, s.direction): s for s in setups}
    return [by_key[key] for key in chosen if key in by_key]


def _gaps_left(results: Any, allowed: set[tuple[str, str]]) -> tuple[dict, dict]:
    """The set-ups in `allowed` with no failed run, most progress first: {key: median
    remaining fraction of the gap (f − f_ref)/(f₀ − f_ref)} in that order, and {key: the
    final values of its runs}."""
    progress: dict[tuple[str, str], list[float]] = {}
    finals: dict[tuple[str, str], list[Any]] = {}
    failed: set[tuple[str, str]] = set()
    for record in results:
        key = (record.controller, record.direction)
        reference = results.reference(record.instance)
        if record.kind == "failed" or record.value is None or reference is None:
            failed.add(key)
            continue
        start = record.initial_value - reference
        progress.setdefault(key, []).append(
            (record.value - reference) / start if start > 0 else 0.0)
        finals.setdefault(key, []).append(record.value)
    ranked = sorted((float(np.median(gaps)), index, key) for index, (key, gaps)
                    in enumerate(progress.items()) if key not in failed and key in allowed)
    return {key: gap for gap, _, key in ranked}, finals


# --- the problem -----------------------------------------------------------------------


class _Reshaped:
    """Calls a user function at x reshaped to the user's shape (picklable when it is)."""

    def __init__(self, function: Callable, shape: tuple[int, ...], part: int | None = None,
                 flatten: bool = False) -> None:
        self.function, self.shape, self.part, self.flatten = function, shape, part, flatten

    def __call__(self, x: Any) -> Any:
        result = self.function(np.asarray(x).reshape(self.shape))
        if self.part is not None:
            result = result[self.part]
        if self.flatten:
            return np.asarray(result, dtype=float).reshape(-1)
        return result


def _problem(objective: Any, x0: Any, f_min: float | None) -> Any:
    from linestep.bench import Problem, as_problems

    if isinstance(objective, Problem):
        if x0 is not None or f_min is not None:
            parts = {"name": objective.name, "value": objective.value,
                     "gradient": objective.gradient,
                     "start": objective.start if x0 is None else x0,
                     "optimal_value": f_min if f_min is not None else (
                         min(objective.optimal_values) if objective.optimal_values else None)}
            return as_problems(parts)[0]
        return objective
    if x0 is None:
        raise TypeError("`x0` is required: pass the start point of your loop.")
    start = np.asarray(x0)
    if start.dtype.kind not in "fiub":
        raise TypeError(f"`x0` must be an array of real numbers; got {x0!r}.")
    if not np.all(np.isfinite(start)):
        raise ValueError("`x0` must be finite; it contains NaN or infinity.")
    shape = start.shape
    if isinstance(objective, tuple) and len(objective) == 2:
        objective = Objective(*objective)
    if not isinstance(objective, Objective):
        raise TypeError("`objective` must be an Objective, a (fun, grad) pair or a "
                        f"linestep.bench Problem; got {objective!r}. advise needs gradients.")
    if not objective.has_gradient:
        raise TypeError("`objective` has no gradient; advise needs one: pass (fun, grad) or "
                        "Objective(fun_and_grad, fused=True).")
    fun, grad = objective._fun, objective._grad  # noqa: SLF001 - our own record
    if objective.fused:
        parts = {"value": _Reshaped(fun, shape, part=0),
                 "gradient": _Reshaped(fun, shape, part=1, flatten=True)}
    else:
        parts = {"value": _Reshaped(fun, shape), "gradient": _Reshaped(grad, shape, flatten=True)}
    parts.update(name="objective", start=start.reshape(-1).astype(float),
                 optimal_value=None if f_min is None else _validate.finite_scalar("f_min", f_min))
    return as_problems(parts)[0]


def _seeds(seed: Any, starts: int) -> tuple[tuple[int, ...], int]:
    """The perturbed starts' seeds and the probe's seed."""
    if isinstance(seed, Sequence) and not isinstance(seed, str):
        seeds = tuple(_validate.integer("seed", s, minimum=0) for s in seed)
        return seeds, seeds[0] if seeds else 0
    seed = _validate.integer("seed", seed, minimum=0)
    starts = _validate.integer("starts", starts)
    return tuple(range(seed, seed + starts - 1)), seed


def _probe(problem: Any, seed: int) -> Smoothness:
    objective = Objective(problem.value, problem.gradient)
    try:
        return estimate_smoothness(objective, problem.start, seed=seed)
    except Exception as exc:  # the user's objective raised: report, do not stop the advice
        from linestep._step import Evaluations

        return Smoothness(lipschitz=None, safe_rate=None, limit_rate=None, lowest=None,
                          residual=None, iterations=0, central=False,
                          evaluations=Evaluations(values=objective.values,
                                                  gradients=objective.gradients),
                          status="undetermined",
                          message=f"The objective raised {type(exc).__name__}: {exc} while "
                                  "the smoothness was probed at x0.")


def _travels(problem: Any) -> bool:
    if getattr(problem, "source", None) is not None:
        return True
    try:
        pickle.dumps(problem)
    except Exception:
        return False
    return True


# --- the recommendation ----------------------------------------------------------------


def _advice(results: Any, setups: list[SetUp], smoothness: Smoothness, *, loop: str,
            budget: int, spent: int) -> Advice:
    ranked = standings(results)
    by_code = {(s.controller, s.direction): s for s in setups}
    avoid = tuple(_avoid_line(row) for row in ranked if row.solved < row.runs)
    smooth_line = _smoothness_line(smoothness)
    common = {"smoothness": smoothness, "study": results, "standings": tuple(ranked),
              "evaluations": spent, "budget": budget, "loop": loop, "avoid": avoid}
    if not ranked or ranked[0].solved == 0:
        none = (f"None of the {len(ranked)} set-ups solved from any of its starts within "
                f"its share of the budget of {budget} evaluations")
        gaps, _ = _gaps_left(results, set(by_code))
        if not gaps or next(iter(gaps.values())) >= 1.0:
            reasons = (none + "; see what to avoid below, raise `budget`, or check the "
                       "objective and its gradient.", smooth_line)
            return Advice(controller=None, direction=None, code=None, reasons=reasons,
                          **common)
        # nothing solved, but runs made progress: the closest is a lead, not a result
        key, gap = next(iter(gaps.items()))
        setup, row = by_code[key], next(r for r in ranked if (r.controller, r.direction) == key)
        reasons = (none + ".", f"{row.label} came closest: no run failed, and its runs ended "
                   f"with a median {gap:.2g} of the gap between their start value and the "
                   "reference (the known minimum, else the best value reached) still to "
                   "close. Treat it as a lead: raise `budget` to confirm it.", smooth_line)
        return Advice(controller=setup.build_controller(), direction=setup.build_direction(),
                      code=row.label, reasons=reasons, tentative=True, **common)
    best = ranked[0]
    setup = by_code[(best.controller, best.direction)]
    reasons = [f"{best.label} solved from {best.solved} of {best.runs} starts with a median "
               f"of {best.median:.0f} evaluations (robustness first, then cost)."]
    if len(ranked) > 1:
        reasons.append(_versus("The runner-up", ranked[1], best))
    fixed = [row for row in ranked if row.controller.startswith("Fixed(")
             and row.direction == "SteepestDescent()"]
    if fixed and fixed[0] is not best and fixed[0] is not ranked[1]:
        reasons.append(_versus("The best fixed rate", fixed[0], best))
    reasons.append(smooth_line)
    return Advice(controller=setup.build_controller(), direction=setup.build_direction(),
                  code=best.label, reasons=tuple(reasons), **common)


def _versus(what: str, row: Standing, best: Standing) -> str:
    text = f"{what}, {row.label}, solved {row.solved} of {row.runs}"
    if row.median is None:
        return text + "."
    ratio = row.median / best.median if best.median else float("inf")
    return text + f" with a median of {row.median:.0f} evaluations ({ratio:.3g}× the cost)."


def _avoid_line(row: Standing) -> str:
    failed = row.runs - row.solved
    what = "; ".join(f"{text} ({count})" if len(row.failures) > 1 else text
                     for text, count in row.failures)
    return f"{row.label}: did not solve from {failed} of {row.runs} starts: {what}."


def _smoothness_line(smoothness: Smoothness) -> str:
    if smoothness.ok:
        return (f"The smoothness estimate at x0 is L̂ ≈ {smoothness.lipschitz:.3g} "
                f"({smoothness.evaluations.gradients} gradient evaluations): fixed rates must "
                f"stay below 2/L̂ ≈ {smoothness.limit_rate:.3g} there.")
    return f"Smoothness at x0: {smoothness.message}"
