"""linestep: line-search and step-size controllers for gradient-based fitting loops.

Public names, by group:

=================  ==========================================================
Protocol           `Objective`, `Step`, `Status`, `Evaluations`, `Trial`,
                   `Controller`
Searches           `Armijo`, `Goldstein`, `Wolfe`, `MoreThuente`,
                   `HagerZhang`, `NonmonotoneArmijo`
Rules              `Fixed`, `Schedule`, `BarzilaiBorwein`, `Polyak`,
                   `Fallback`
Driver             `descend`, `Run`, `History`
Directions         `SteepestDescent`, `LBFGS`, `NonlinearCG`
Initial trials     `UnitTrial`, `PreviousTrial`, `QuadraticTrial`,
                   `ScaledTrial`, `HagerZhangStart`
Advice             `estimate_smoothness`, `Smoothness`, `diagnose`,
                   `Diagnosis`, `advise`, `Advice`
=================  ==========================================================
"""

from linestep import stopping
from linestep._descend import History, Run, descend
from linestep._initial import PreviousTrial, QuadraticTrial, ScaledTrial, UnitTrial
from linestep._objective import Objective
from linestep._step import Controller, Evaluations, Status, Step, Trial
from linestep.advice import (
    Advice,
    Diagnosis,
    Smoothness,
    advise,
    diagnose,
    estimate_smoothness,
)
from linestep.directions import LBFGS, NonlinearCG, SteepestDescent
from linestep.rules.barzilai_borwein import BarzilaiBorwein
from linestep.rules.fallback import Fallback
from linestep.rules.fixed import Fixed
from linestep.rules.polyak import Polyak
from linestep.rules.schedule import Schedule
from linestep.searches.armijo import Armijo
from linestep.searches.goldstein import Goldstein
from linestep.searches.hager_zhang import HagerZhang, HagerZhangStart
from linestep.searches.more_thuente import MoreThuente
from linestep.searches.nonmonotone import NonmonotoneArmijo
from linestep.searches.wolfe import Wolfe

__all__ = [
    "Advice",
    "Armijo",
    "BarzilaiBorwein",
    "Controller",
    "Diagnosis",
    "Evaluations",
    "Fallback",
    "Fixed",
    "Goldstein",
    "HagerZhang",
    "HagerZhangStart",
    "History",
    "LBFGS",
    "MoreThuente",
    "NonlinearCG",
    "NonmonotoneArmijo",
    "Objective",
    "Polyak",
    "PreviousTrial",
    "QuadraticTrial",
    "Run",
    "Schedule",
    "ScaledTrial",
    "Smoothness",
    "Status",
    "SteepestDescent",
    "Step",
    "Trial",
    "UnitTrial",
    "Wolfe",
    "advise",
    "descend",
    "diagnose",
    "estimate_smoothness",
    "stopping",
]

__version__ = "0.1.0"

for _name in __all__:
    _obj = globals()[_name]
    if isinstance(_obj, type) or callable(_obj) and not isinstance(_obj, type(stopping)):
        _obj.__module__ = "linestep"
del _name, _obj
