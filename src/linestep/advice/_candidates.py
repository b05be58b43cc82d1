"""The set-ups `advise` tries: each controller and direction as pasteable code and factories."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from functools import partial
from typing import Any

from linestep.advice._smoothness import Smoothness
from linestep.directions import LBFGS, NonlinearCG, SteepestDescent
from linestep.rules.barzilai_borwein import BarzilaiBorwein
from linestep.rules.fallback import Fallback
from linestep.rules.fixed import Fixed
from linestep.rules.polyak import Polyak
from linestep.rules.schedule import Schedule
from linestep.searches.armijo import Armijo
from linestep.searches.hager_zhang import HagerZhang
from linestep.searches.more_thuente import MoreThuente
from linestep.searches.nonmonotone import NonmonotoneArmijo
from linestep.searches.wolfe import Wolfe

__all__ = ["SetUp", "setups_for"]

# Fixed rates tried, as multiples of 1/L̂ (below the stable limit 2/L̂).
FIXED_MULTIPLES = (0.5, 1.0, 1.8)
# The inverse-time schedule's decay: t_k = t₀/(1 + SCHEDULE_DECAY·k).
SCHEDULE_DECAY = 0.01
# Digits kept in the rates written into set-ups (so the pasted line is short).
RATE_DIGITS = 3


@dataclass(frozen=True, slots=True)
class SetUp:
    """A controller and a direction, as pasteable code and as factories."""

    controller: str
    direction: str
    build_controller: Callable[[], Any]
    build_direction: Callable[[], Any]


def _rate(value: float) -> float:
    return float(f"{value:.{RATE_DIGITS}g}")


def setups_for(loop: str, smoothness: Smoothness, problem: Any) -> list[SetUp]:
    """The set-ups for `loop`: fixed rates and a schedule from L̂ when the probe succeeded,
    every search, both BB variants, Polyak when f_min is known, then L-BFGS and nonlinear CG."""
    setups: list[SetUp] = []
    if loop in ("any", "steepest"):
        direction = ("SteepestDescent()", SteepestDescent)

        def add(code: str, build: Callable[[], Any]) -> None:
            setups.append(SetUp(code, direction[0], build, direction[1]))

        if smoothness.ok:
            for multiple in FIXED_MULTIPLES:
                rate = _rate(multiple / smoothness.lipschitz)
                add(f"Fixed({rate!r})", partial(Fixed, rate))
            rate = _rate(1.0 / smoothness.lipschitz)
            add(f"Schedule.robbins_monro({rate!r}, rate={SCHEDULE_DECAY!r})",
                partial(Schedule.robbins_monro, rate, rate=SCHEDULE_DECAY))
        for code, build in _searches():
            add(code, build)
        add("BarzilaiBorwein()", BarzilaiBorwein)
        add("BarzilaiBorwein(variant='long')", partial(BarzilaiBorwein, variant="long"))
        if problem.optimal_values:
            f_min = min(problem.optimal_values)
            add(f"Polyak(f_min={f_min!r})", partial(Polyak, f_min=f_min))
        if smoothness.ok:
            rate = _rate(FIXED_MULTIPLES[-1] / smoothness.lipschitz)
            add(f"Fallback(Fixed({rate!r}), Armijo())", partial(_fallback, rate))
    if loop in ("any", "quasi_newton"):
        # (Fallback(Fixed(1.0), Armijo()) would repeat Armijo(), whose first trial is 1.0)
        for code, build in [("Fixed(1.0)", partial(Fixed, 1.0)), *_searches(nonmonotone=False)]:
            setups.append(SetUp(code, "LBFGS()", build, LBFGS))
    if loop == "any":
        for code, build in [("Wolfe()", Wolfe), ("HagerZhang()", HagerZhang),
                            ("MoreThuente()", MoreThuente)]:
            setups.append(SetUp(code, "NonlinearCG()", build, NonlinearCG))
    return setups


def _searches(nonmonotone: bool = True) -> list[tuple[str, Callable[[], Any]]]:
    entries = [("Armijo()", Armijo), ("Wolfe()", Wolfe), ("HagerZhang()", HagerZhang),
               ("MoreThuente()", MoreThuente)]
    if nonmonotone:
        entries.append(("NonmonotoneArmijo()", NonmonotoneArmijo))
    return entries


def _fallback(rate: float) -> Fallback:
    return Fallback(Fixed(rate), Armijo())
