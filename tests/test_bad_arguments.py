"""Every invalid-argument case, in one table per kind of call.

Each case asserts the exception type and a fragment of the message, found word
for word: at least the offending argument's name in backticks (the house rule:
name, bad value, fix), and for many cases the whole sentence with the bad value
and the fix. Unknown keywords and surplus positional arguments get Python's own
message, so those cases look for the argument's name or the word "positional".
"""

from __future__ import annotations

import math
import re

import numpy as np
import pytest

from linestep import (
    Armijo,
    Fallback,
    Fixed,
    Goldstein,
    Objective,
    PreviousTrial,
    QuadraticTrial,
    ScaledTrial,
    descend,
    stopping,
)
from linestep.directions import LBFGS, NonlinearCG
from linestep.rules.barzilai_borwein import BarzilaiBorwein
from linestep.rules.polyak import Polyak
from linestep.rules.schedule import Schedule
from linestep.searches.hager_zhang import HagerZhang, HagerZhangStart
from linestep.searches.more_thuente import MoreThuente
from linestep.searches.nonmonotone import NonmonotoneArmijo
from linestep.searches.wolfe import Wolfe
from linestep.stopping import (
    AnyOf,
    Divergence,
    GradientNorm,
    MaxEvaluations,
    MaxIterations,
    Stall,
    StepLength,
    TimeLimit,
    ValueChange,
)


def square(x):
    return float(np.sum(x * x))


def square_gradient(x):
    return 2.0 * x


X = np.array([3.0, -4.0])
D = np.array([-6.0, 8.0])
PAIR = (square, square_gradient)


def case(build, error, name, id):
    """A case whose message must name the argument `name` in backticks."""
    return pytest.param(build, error, re.escape(f"`{name}`"), id=id)


def says(build, error, text, id):
    """A case whose message must contain `text` word for word."""
    return pytest.param(build, error, re.escape(text), id=id)


def shown(value):
    """How an option value appears in a case id."""
    plain = isinstance(value, (int, float, str, tuple)) or value is None
    return repr(value) if plain else type(value).__name__


def refuses(kind, error, text, **options):
    """A case `kind(**options)` whose message must contain `text` word for word."""
    label = ", ".join(f"{key}={shown(value)}" for key, value in options.items())
    return says(lambda: kind(**options), error, text, f"{kind.__name__} {label}")


CONSTRUCTION = [
    # Issue 10 item 13: a rule as BarzilaiBorwein's globalization would drop the BB step.
    *[case(lambda g=g: BarzilaiBorwein(globalize=g), TypeError, "globalize",
           f"BarzilaiBorwein globalize={type(g).__name__ if not isinstance(g, type) else g}")
      for g in (Fixed(0.1), Polyak(f_min=0.0), Schedule.exponential(1.0, rate=0.9),
                Fallback(Fixed(0.1), Armijo()), BarzilaiBorwein(), Armijo, "armijo")],
    # Issue 10 item 11.
    case(lambda: Objective(square, fused="no"), TypeError, "fused", "Objective fused='no'"),
    case(lambda: Objective(square, fused=1), TypeError, "fused", "Objective fused=1"),
    # Armijo
    *[case(lambda v=v: Armijo(c1=v), ValueError, "c1", f"Armijo c1={v}")
      for v in (0, 1, -1, math.nan, 1.5)],
    case(lambda: Armijo(c1="a"), TypeError, "c1", "Armijo c1='a'"),
    case(lambda: Armijo(c1=True), TypeError, "c1", "Armijo c1=True"),
    *[case(lambda v=v: Armijo(shrink=v), ValueError, "shrink", f"Armijo shrink={v}")
      for v in (0, 1, 1.5, -0.5, math.nan)],
    case(lambda: Armijo(shrink=None), TypeError, "shrink", "Armijo shrink=None"),
    *[case(lambda v=v: Armijo(shrink_limits=v), ValueError, "shrink_limits",
           f"Armijo shrink_limits={v}")
      for v in ((0.6, 0.5), (0.0, 0.5), (0.1, 1.0), (-0.1, 0.5), (0.1, math.nan))],
    *[case(lambda v=v: Armijo(shrink_limits=v), TypeError, "shrink_limits",
           f"Armijo shrink_limits={v!r}")
      for v in (0.3, (0.1,), (0.1, 0.2, 0.3), ("a", 0.5))],
    case(lambda: Armijo(max_evaluations=0), ValueError, "max_evaluations",
         "Armijo max_evaluations=0"),
    case(lambda: Armijo(max_evaluations=2.5), TypeError, "max_evaluations",
         "Armijo max_evaluations=2.5"),
    case(lambda: Armijo(interpolation="linear"), ValueError, "interpolation",
         "Armijo interpolation='linear'"),
    case(lambda: Armijo(interpolation="Cubic"), ValueError, "interpolation",
         "Armijo interpolation='Cubic'"),
    *[case(lambda v=v: Armijo(initial=v), ValueError, "initial", f"Armijo initial={v}")
      for v in (-1.0, 0, math.inf, math.nan)],
    case(lambda: Armijo(initial="x"), TypeError, "initial", "Armijo initial='x'"),
    case(lambda: Armijo(initial=None), TypeError, "initial", "Armijo initial=None"),
    # Goldstein
    *[case(lambda v=v: Goldstein(c=v), ValueError, "c", f"Goldstein c={v}")
      for v in (0, 0.5, 0.7, -0.1, math.nan)],
    case(lambda: Goldstein(c="a"), TypeError, "c", "Goldstein c='a'"),
    case(lambda: Goldstein(max_size=0.0), ValueError, "max_size", "Goldstein max_size=0"),
    case(lambda: Goldstein(max_evaluations=0), ValueError, "max_evaluations",
         "Goldstein max_evaluations=0"),
    case(lambda: Goldstein(initial=-2.0), ValueError, "initial", "Goldstein initial=-2"),
    # Fixed
    *[case(lambda v=v: Fixed(v), ValueError, "size", f"Fixed size={v}")
      for v in (0, -0.1, math.inf, math.nan)],
    case(lambda: Fixed("0.1"), TypeError, "size", "Fixed size='0.1'"),
    # Fallback
    case(lambda: Fallback(lambda x: x, Armijo()), TypeError, "rule", "Fallback rule=lambda"),
    case(lambda: Fallback(Fixed(0.1), "Armijo"), TypeError, "search",
         "Fallback search='Armijo'"),
    case(lambda: Fallback(Fixed(0.1), None), TypeError, "search", "Fallback search=None"),
    *[case(lambda c=c: Fallback(c, c), ValueError, "rule", f"Fallback same {type(c).__name__}")
      for c in (Armijo(), Fixed(0.1))],
    # Initial-trial strategies
    case(lambda: ScaledTrial(length=0.0), ValueError, "length", "ScaledTrial length=0"),
    case(lambda: PreviousTrial(growth=-1.0), ValueError, "growth", "PreviousTrial growth=-1"),
    case(lambda: PreviousTrial(max_size=0.0), ValueError, "max_size",
         "PreviousTrial max_size=0"),
    case(lambda: QuadraticTrial(cap=0.0), ValueError, "cap", "QuadraticTrial cap=0"),
    pytest.param(lambda: PreviousTrial(first=-1.0), ValueError, "first",
                 id="PreviousTrial first=-1"),
    pytest.param(lambda: QuadraticTrial(first="x"), TypeError, "first",
                 id="QuadraticTrial first='x'"),
    # Objective
    case(lambda: Objective(3.0), TypeError, "fun", "Objective fun=3.0"),
    case(lambda: Objective(square, "grad"), TypeError, "grad", "Objective grad='grad'"),
    case(lambda: Objective(square, square_gradient, fused=True), ValueError, "grad",
         "Objective fused with grad"),
    # Wolfe
    refuses(Wolfe, ValueError, "`c1`", c1=0.0),
    refuses(Wolfe, ValueError, "`c1`", c1=1.0),
    refuses(Wolfe, ValueError, "`c1`", c1=-0.1),
    refuses(Wolfe, TypeError, "`c1`", c1="0.1"),
    refuses(Wolfe, ValueError, "`c2`", c2=1.0),
    refuses(Wolfe, ValueError, "`c2`", c2=0.0),
    refuses(Wolfe, ValueError, "`c2`", c1=0.5, c2=0.1),
    refuses(Wolfe, TypeError, "`strong`", strong="yes"),
    refuses(Wolfe, ValueError, "`expand`", expand=1.0),
    refuses(Wolfe, ValueError, "`expand`", expand=-2.0),
    refuses(Wolfe, ValueError, "`expand`", expand=math.inf),
    refuses(Wolfe, ValueError, "`max_size`", max_size=-1.0),
    refuses(Wolfe, ValueError, "`max_size`", max_size=0.0),
    refuses(Wolfe, ValueError, "`initial`", initial=-1.0),
    refuses(Wolfe, TypeError, "`initial`", initial="unit"),
    refuses(Wolfe, ValueError, "`max_evaluations`", max_evaluations=0),
    refuses(Wolfe, TypeError, "`max_evaluations`", max_evaluations=2.5),
    # MoreThuente
    refuses(MoreThuente, ValueError, "`c1`", c1=0.0),
    refuses(MoreThuente, ValueError, "`c1`", c1=1.0),
    refuses(MoreThuente, ValueError, "`c1`", c1=-0.1),
    refuses(MoreThuente, TypeError, "`c1`", c1="0.1"),
    refuses(MoreThuente, ValueError, "`c2`", c2=1.0),
    refuses(MoreThuente, ValueError, "`c2`", c1=0.5, c2=0.1),
    refuses(MoreThuente, ValueError, "`width_rtol`", width_rtol=-1e-3),
    refuses(MoreThuente, ValueError, "`width_rtol`", width_rtol=1.0),
    refuses(MoreThuente, ValueError, "`min_size`", min_size=-1.0),
    refuses(MoreThuente, ValueError, "`max_size`", max_size=-1.0),
    refuses(MoreThuente, ValueError, "`max_size`", max_size=0.0),
    refuses(MoreThuente, ValueError, "`max_size`", max_size=math.inf),
    refuses(MoreThuente, ValueError, "`min_size`", min_size=2.0, max_size=1.0),
    refuses(MoreThuente, ValueError, "`initial`", initial=-1.0),
    refuses(MoreThuente, TypeError, "`initial`", initial="unit"),
    refuses(MoreThuente, ValueError, "`max_evaluations`", max_evaluations=0),
    refuses(MoreThuente, TypeError, "`max_evaluations`", max_evaluations=2.5),
    # HagerZhang
    refuses(HagerZhang, ValueError, "`c1`", c1=0.0),
    refuses(HagerZhang, ValueError, "0 < c1 < 1/2", c1=0.5, c2=0.9),
    refuses(HagerZhang, ValueError, "`c2`", c1=0.3, c2=0.2),
    refuses(HagerZhang, ValueError, "`c2`", c2=1.0),
    refuses(HagerZhang, TypeError, "`c1`", c1="0.1"),
    refuses(HagerZhang, ValueError, "`epsilon`", epsilon=-1e-6),
    refuses(HagerZhang, ValueError, "`epsilon`", epsilon=math.inf),
    refuses(HagerZhang, ValueError, "`theta`", theta=1.0),
    refuses(HagerZhang, ValueError, "`bisect_threshold`", bisect_threshold=0.0),
    refuses(HagerZhang, ValueError, "`expand`", expand=1.0),
    refuses(HagerZhang, ValueError, "`expand`", expand=-2.0),
    refuses(HagerZhang, ValueError, "`memory_weight`", memory_weight=1.5),
    refuses(HagerZhang, TypeError, "`memory_weight`", memory_weight=None),
    refuses(HagerZhang, ValueError, "`max_size`", max_size=0.0),
    refuses(HagerZhang, ValueError, "`max_evaluations`", max_evaluations=0),
    refuses(HagerZhang, TypeError, "`initial`", initial="unit"),
    refuses(HagerZhang, ValueError, "`initial`", initial=-1.0),
    refuses(HagerZhang, TypeError, "step", step=1.0),
    # HagerZhangStart
    refuses(HagerZhangStart, ValueError, "`fraction`", fraction=0.0),
    refuses(HagerZhangStart, ValueError, "`growth`", growth=-1.0),
    refuses(HagerZhangStart, ValueError, "`probe`", probe=1.0),
    # NonmonotoneArmijo
    refuses(NonmonotoneArmijo, ValueError, "`memory` must be >= 1", memory=0),
    refuses(NonmonotoneArmijo, ValueError, "`memory`", memory=-3),
    refuses(NonmonotoneArmijo, TypeError, "`memory` must be an integer", memory=2.5),
    refuses(NonmonotoneArmijo, TypeError, "`memory`", memory=True),
    refuses(NonmonotoneArmijo, ValueError, "`eta` must satisfy 0 <= eta <= 1", eta=-0.1),
    refuses(NonmonotoneArmijo, ValueError, "`eta`", eta=1.5),
    refuses(NonmonotoneArmijo, ValueError, "`eta`", eta=math.nan),
    refuses(NonmonotoneArmijo, TypeError, "`eta`", eta="0.5"),
    refuses(NonmonotoneArmijo, ValueError, "`reference` must be one of 'max', 'average'",
            reference="mean"),
    refuses(NonmonotoneArmijo, ValueError, "`c1`", c1=0.0),
    refuses(NonmonotoneArmijo, ValueError, "`c1`", c1=1.0),
    refuses(NonmonotoneArmijo, ValueError, "`shrink`", shrink=1.0),
    refuses(NonmonotoneArmijo, ValueError, "`interpolation`", interpolation="spline"),
    refuses(NonmonotoneArmijo, ValueError, "`shrink_limits`", shrink_limits=(0.6, 0.5)),
    refuses(NonmonotoneArmijo, ValueError, "`initial`", initial=-1.0),
    refuses(NonmonotoneArmijo, ValueError, "`max_evaluations`", max_evaluations=0),
    # Polyak
    refuses(Polyak, ValueError, "`f_min` must be finite", f_min=math.nan),
    refuses(Polyak, ValueError, "`f_min`", f_min=-math.inf),
    refuses(Polyak, TypeError, "`f_min`", f_min="zero"),
    refuses(Polyak, ValueError, "`max_size`", max_size=0.0),
    refuses(Polyak, ValueError, "`max_size`", max_size=math.inf),
    refuses(Polyak, ValueError, "`gap`", gap=-1.0),
    refuses(Polyak, ValueError, "`path_bound`", path_bound=0.0),
    # BarzilaiBorwein
    refuses(BarzilaiBorwein, ValueError,
            "`variant` must be one of 'long', 'short', 'alternate'", variant="bb1"),
    refuses(BarzilaiBorwein, ValueError, "`min_size`", min_size=0.0),
    refuses(BarzilaiBorwein, ValueError, "`max_size`", max_size=math.inf),
    refuses(BarzilaiBorwein, ValueError, "`min_size` must not exceed",
            min_size=2.0, max_size=1.0),
    refuses(BarzilaiBorwein, ValueError, "`first` must be a finite positive number",
            first=-1.0),
    refuses(BarzilaiBorwein, TypeError, "`first` must be a positive number or a trial",
            first="scaled"),
    refuses(BarzilaiBorwein, TypeError, "`globalize` must be a line search",
            globalize="raydan"),
    refuses(BarzilaiBorwein, TypeError, "`globalize`", globalize=BarzilaiBorwein()),
    # Schedule
    says(lambda: Schedule(0.1), TypeError, "`function`", "Schedule function=0.1"),
    says(lambda: Schedule.step_decay(0.0, factor=0.5, every=1), ValueError, "`initial`",
         "Schedule.step_decay initial=0"),
    says(lambda: Schedule.step_decay(-1.0, factor=0.5, every=1), ValueError, "`initial`",
         "Schedule.step_decay initial=-1"),
    says(lambda: Schedule.step_decay(math.inf, factor=0.5, every=1), ValueError, "`initial`",
         "Schedule.step_decay initial=inf"),
    says(lambda: Schedule.step_decay(math.nan, factor=0.5, every=1), ValueError, "`initial`",
         "Schedule.step_decay initial=nan"),
    says(lambda: Schedule.step_decay("0.1", factor=0.5, every=1), TypeError, "`initial`",
         "Schedule.step_decay initial='0.1'"),
    says(lambda: Schedule.step_decay(0.1, factor=0.0, every=1), ValueError, "`factor`",
         "Schedule.step_decay factor=0"),
    says(lambda: Schedule.step_decay(0.1, factor=1.5, every=1), ValueError, "`factor`",
         "Schedule.step_decay factor=1.5"),
    says(lambda: Schedule.step_decay(0.1, factor=math.nan, every=1), ValueError, "`factor`",
         "Schedule.step_decay factor=nan"),
    says(lambda: Schedule.step_decay(0.1, factor=0.5, every=0), ValueError, "`every`",
         "Schedule.step_decay every=0"),
    says(lambda: Schedule.step_decay(0.1, factor=0.5, every=2.0), TypeError, "`every`",
         "Schedule.step_decay every=2.0"),
    says(lambda: Schedule.step_decay(0.1, factor=0.5, every=True), TypeError, "`every`",
         "Schedule.step_decay every=True"),
    says(lambda: Schedule.exponential(1.0, rate=0.0), ValueError, "`rate`",
         "Schedule.exponential rate=0"),
    says(lambda: Schedule.exponential(1.0, rate=1.01), ValueError, "`rate`",
         "Schedule.exponential rate=1.01"),
    says(lambda: Schedule.exponential(1.0, rate=-0.5), ValueError, "`rate`",
         "Schedule.exponential rate=-0.5"),
    says(lambda: Schedule.robbins_monro(1.0, rate=-1.0), ValueError, "`rate`",
         "Schedule.robbins_monro rate=-1"),
    says(lambda: Schedule.robbins_monro(1.0, rate=math.inf), ValueError, "`rate`",
         "Schedule.robbins_monro rate=inf"),
    says(lambda: Schedule.robbins_monro(1.0, rate=1.0, power=0.0), ValueError, "`power`",
         "Schedule.robbins_monro power=0"),
    says(lambda: Schedule.robbins_monro(1.0, rate=1.0, power=-1.0), ValueError, "`power`",
         "Schedule.robbins_monro power=-1"),
    says(lambda: Schedule.taper(1.0, final=0.0, steps=10), ValueError, "`final`",
         "Schedule.taper final=0"),
    says(lambda: Schedule.taper(1.0, final=2.0, steps=10), ValueError, "`final`",
         "Schedule.taper final=2 above initial"),
    says(lambda: Schedule.taper(1.0, final=0.1, steps=0), ValueError, "`steps`",
         "Schedule.taper steps=0"),
    says(lambda: Schedule.taper(1.0, final=0.1, steps=10.0), TypeError, "`steps`",
         "Schedule.taper steps=10.0"),
    says(lambda: Schedule.taper(1.0, final=0.1, steps=10, power=0.0), ValueError,
         "`power`", "Schedule.taper power=0"),
    says(lambda: Schedule.cosine(0.0, final=0.1, period=10), ValueError, "`initial`",
         "Schedule.cosine initial=0"),
    says(lambda: Schedule.cosine(1.0, final=0.0, period=10), ValueError, "zero size",
         "Schedule.cosine final=0"),
    says(lambda: Schedule.cosine(1.0, final=-0.1, period=10), ValueError, "`final`",
         "Schedule.cosine final=-0.1"),
    says(lambda: Schedule.cosine(1.0, final=1.5, period=10), ValueError, "`final`",
         "Schedule.cosine final=1.5 above initial"),
    says(lambda: Schedule.cosine(1.0, final=0.1, period=0), ValueError, "`period`",
         "Schedule.cosine period=0"),
    says(lambda: Schedule.cosine(1.0, final=0.1, period=10, restart_growth=0), ValueError,
         "`restart_growth`", "Schedule.cosine restart_growth=0"),
    says(lambda: Schedule.cosine(1.0, final=0.1, period=10, restart_growth=1.5), TypeError,
         "`restart_growth`", "Schedule.cosine restart_growth=1.5"),
    says(lambda: Schedule.exponential(1.0, rate=0.5).with_ramp(0), ValueError, "`n`",
         "Schedule.with_ramp steps=0"),
    says(lambda: Schedule.exponential(1.0, rate=0.5).with_ramp(5, start=0.0), ValueError,
         "`start`", "Schedule.with_ramp start=0"),
    says(lambda: Schedule.exponential(1.0, rate=0.5).with_ramp(5, start=1.5), ValueError,
         "`start`", "Schedule.with_ramp start=1.5"),
    says(lambda: Schedule.exponential(1.0, rate=0.5).size_at(-1), ValueError, "`k`",
         "Schedule.size_at k=-1"),
    says(lambda: Schedule.exponential(1.0, rate=0.5).size_at(1.0), TypeError, "`k`",
         "Schedule.size_at k=1.0"),
    # Options are keyword-only and unknown keywords are errors (Python's own message).
    says(lambda: Schedule.exponential(1.0, 0.5), TypeError, "positional",
         "Schedule.exponential rate positional"),
    says(lambda: Schedule.cosine(1.0, final=0.1, period=10, growth=2), TypeError, "growth",
         "Schedule.cosine unknown growth="),
    # LBFGS
    says(lambda: LBFGS(0), ValueError, "`memory` must be >= 1", "LBFGS memory=0"),
    says(lambda: LBFGS(-3), ValueError, "`memory`", "LBFGS memory=-3"),
    says(lambda: LBFGS(2.5), TypeError, "`memory` must be an integer", "LBFGS memory=2.5"),
    says(lambda: LBFGS(True), TypeError, "`memory`", "LBFGS memory=True"),
    says(lambda: LBFGS(curvature_tolerance=-1e-3), ValueError, "`curvature_tolerance`",
         "LBFGS curvature_tolerance=-0.001"),
    says(lambda: LBFGS(curvature_tolerance=math.nan), ValueError, "`curvature_tolerance`",
         "LBFGS curvature_tolerance=nan"),
    says(lambda: LBFGS(5, 1e-3), TypeError, "positional",
         "LBFGS curvature_tolerance positional"),
    says(lambda: LBFGS(size=3), TypeError, "size", "LBFGS unknown size="),
    # NonlinearCG
    says(lambda: NonlinearCG("fr"), ValueError, "'pr+', 'hager_zhang'",
         "NonlinearCG beta='fr'"),
    says(lambda: NonlinearCG(None), ValueError, "`beta` must be one of",
         "NonlinearCG beta=None"),
    says(lambda: NonlinearCG(eta=0.0), ValueError, "`eta`", "NonlinearCG eta=0"),
    says(lambda: NonlinearCG(eta="small"), TypeError, "`eta`", "NonlinearCG eta='small'"),
    says(lambda: NonlinearCG(restart_every=0), ValueError, "`restart_every` must be >= 1",
         "NonlinearCG restart_every=0"),
    says(lambda: NonlinearCG(restart_every=2.0), TypeError, "`restart_every`",
         "NonlinearCG restart_every=2.0"),
    says(lambda: NonlinearCG(orthogonality_restart=0.0), ValueError, "`orthogonality_restart`",
         "NonlinearCG orthogonality_restart=0"),
    says(lambda: NonlinearCG(orthogonality_restart=-0.2), ValueError,
         "`orthogonality_restart`", "NonlinearCG orthogonality_restart=-0.2"),
    says(lambda: NonlinearCG(restart=3), TypeError, "restart", "NonlinearCG unknown restart="),
    # stopping.GradientNorm
    says(lambda: GradientNorm(atol=-1), ValueError,
         "`atol` must be a finite number >= 0; got atol=-1.0.", "GradientNorm atol=-1"),
    says(lambda: GradientNorm(atol=math.nan), ValueError,
         "`atol` must be a finite number >= 0", "GradientNorm atol=nan"),
    says(lambda: GradientNorm(atol=math.inf), ValueError,
         "`atol` must be a finite number >= 0", "GradientNorm atol=inf"),
    says(lambda: GradientNorm(atol="1e-8"), TypeError,
         "`atol` must be a real number; got '1e-8'.", "GradientNorm atol='1e-8'"),
    says(lambda: GradientNorm(atol=True), TypeError,
         "`atol` must be a real number; got True.", "GradientNorm atol=True"),
    says(lambda: GradientNorm(rtol=1.0), ValueError,
         "`rtol` must satisfy 0 <= rtol < 1; got rtol=1.0.", "GradientNorm rtol=1"),
    says(lambda: GradientNorm(rtol=-1e-9), ValueError,
         "`rtol` must satisfy 0 <= rtol < 1", "GradientNorm rtol=-1e-9"),
    says(lambda: GradientNorm(norm=3), ValueError,
         "`norm` must be one of inf (np.inf), 2 or 1; got norm=3.", "GradientNorm norm=3"),
    says(lambda: GradientNorm(norm="fro"), ValueError, "`norm` must be one of inf",
         "GradientNorm norm='fro'"),
    says(lambda: GradientNorm(norm=-math.inf), ValueError, "`norm` must be one of inf",
         "GradientNorm norm=-inf"),
    says(lambda: GradientNorm(gtol=1e-6), TypeError, "gtol", "GradientNorm unknown gtol="),
    says(lambda: GradientNorm(1e-6), TypeError, "positional", "GradientNorm atol positional"),
    # stopping.ValueChange
    says(lambda: ValueChange(atol=-0.5), ValueError, "`atol` must be a finite number >= 0",
         "ValueChange atol=-0.5"),
    says(lambda: ValueChange(rtol=2.0), ValueError,
         "`rtol` must satisfy 0 <= rtol < 1; got rtol=2.0.", "ValueChange rtol=2"),
    says(lambda: ValueChange(window=0), ValueError, "`window` must be >= 1; got window=0.",
         "ValueChange window=0"),
    says(lambda: ValueChange(window=2.0), TypeError,
         "`window` must be an integer; got 2.0. Write 2 instead.", "ValueChange window=2.0"),
    says(lambda: ValueChange(window=True), TypeError,
         "`window` must be an integer; got True.", "ValueChange window=True"),
    # stopping.StepLength
    says(lambda: StepLength(atol=-1), ValueError,
         "`atol` must be a finite number >= 0; got atol=-1.0.", "StepLength atol=-1"),
    says(lambda: StepLength(rtol=1.5), ValueError, "`rtol` must satisfy 0 <= rtol < 1",
         "StepLength rtol=1.5"),
    says(lambda: StepLength(norm=0), ValueError, "`norm` must be one of inf",
         "StepLength norm=0"),
    # stopping.MaxIterations
    says(lambda: MaxIterations(-1), ValueError, "`n` must be >= 0; got n=-1.",
         "MaxIterations n=-1"),
    says(lambda: MaxIterations(1e4), TypeError,
         "`n` must be an integer; got 10000.0. Write 10000 instead.",
         "MaxIterations n=10000.0"),
    says(lambda: MaxIterations(None), TypeError, "`n` must be an integer; got None.",
         "MaxIterations n=None"),
    says(lambda: MaxIterations(), TypeError, "n", "MaxIterations n missing"),
    # stopping.MaxEvaluations
    says(lambda: MaxEvaluations(-5), ValueError, "`n` must be >= 0; got n=-5.",
         "MaxEvaluations n=-5"),
    says(lambda: MaxEvaluations("100"), TypeError, "`n` must be an integer; got '100'.",
         "MaxEvaluations n='100'"),
    # stopping.TimeLimit
    says(lambda: TimeLimit(0), ValueError,
         "`seconds` must be a positive number; got seconds=0.0.", "TimeLimit seconds=0"),
    says(lambda: TimeLimit(-3.0), ValueError, "`seconds` must be a positive number",
         "TimeLimit seconds=-3"),
    says(lambda: TimeLimit(math.nan), ValueError, "`seconds` must be a positive number",
         "TimeLimit seconds=nan"),
    says(lambda: TimeLimit("60"), TypeError, "`seconds` must be a real number; got '60'.",
         "TimeLimit seconds='60'"),
    # stopping.Divergence
    says(lambda: Divergence(bound=0.0), ValueError,
         "`bound` must be a positive number; got bound=0.0.", "Divergence bound=0"),
    says(lambda: Divergence(bound=-1e100), ValueError, "`bound` must be a positive number",
         "Divergence bound=-1e100"),
    says(lambda: Divergence(growth=-0.1), ValueError,
         "`growth` must be a finite number >= 0; got growth=-0.1.",
         "Divergence growth=-0.1"),
    says(lambda: Divergence(growth=math.inf), ValueError,
         "`growth` must be a finite number >= 0", "Divergence growth=inf"),
    # stopping.Stall
    says(lambda: Stall(iterations=0), ValueError,
         "`iterations` must be >= 1; got iterations=0.", "Stall iterations=0"),
    says(lambda: Stall(iterations=2.5), TypeError,
         "`iterations` must be an integer; got 2.5.", "Stall iterations=2.5"),
    says(lambda: Stall(rtol=1.0), ValueError, "`rtol` must satisfy 0 <= rtol < 1",
         "Stall rtol=1"),
    # stopping.AnyOf
    says(lambda: AnyOf(), ValueError, "`criteria` must hold at least one criterion; got none.",
         "AnyOf no criteria"),
    says(lambda: AnyOf(GradientNorm(), 42), TypeError,
         "`criteria` must be callables taking a Progress", "AnyOf criterion 42"),
    # stopping.default
    says(lambda: stopping.default(max_iterations=0.5), TypeError, "`n` must be an integer",
         "stopping.default max_iterations=0.5"),
    says(lambda: stopping.default(gradient_rtol=1.0), ValueError, "`rtol` must satisfy",
         "stopping.default gradient_rtol=1"),
    says(lambda: stopping.default(seconds=0), ValueError, "`seconds` must be a positive number",
         "stopping.default seconds=0"),
    says(lambda: stopping.default(gtol=1e-6), TypeError, "gtol",
         "stopping.default unknown gtol="),
]


@pytest.mark.parametrize(("build", "error", "pattern"), CONSTRUCTION)
def test_bad_constructor_argument(build, error, pattern):
    with pytest.raises(error, match=pattern):
        build()


CONTROLLERS = {
    "Armijo": Armijo,
    "Goldstein": Goldstein,
    "Fixed": lambda: Fixed(0.1),
    "Fallback": lambda: Fallback(Fixed(0.1), Armijo()),
}
SEARCHES = ("Armijo", "Goldstein", "Fallback")

# (objective, x, direction, keyword arguments, exception, argument named)
CALLS_ANY = {
    "x has NaN": (PAIR, np.array([math.nan, 1.0]), D, {}, ValueError, "x"),
    "x has inf": (PAIR, np.array([math.inf, 1.0]), D, {}, ValueError, "x"),
    "x not numbers": (PAIR, "ab", D, {}, TypeError, "x"),
    "direction wrong shape": (PAIR, X, np.ones(3), {}, ValueError, "direction"),
    "direction (2,1) for x (2,)": (PAIR, X, D.reshape(2, 1), {}, ValueError, "direction"),
    "direction has NaN": (PAIR, X, np.array([math.nan, 1.0]), {}, ValueError, "direction"),
    "direction has inf": (PAIR, X, np.array([-math.inf, 1.0]), {}, ValueError,
                          "direction"),
    "value nan": (PAIR, X, D, {"value": math.nan}, ValueError, "value"),
    "value inf": (PAIR, X, D, {"value": math.inf}, ValueError, "value"),
    "value not a number": (PAIR, X, D, {"value": "abc"}, TypeError, "value"),
    "value an array": (PAIR, X, D, {"value": np.ones(2)}, TypeError, "value"),
    "gradient has NaN": (PAIR, X, D, {"gradient": np.array([math.nan, 0.0])}, ValueError,
                         "gradient"),
    "gradient has inf": (PAIR, X, D, {"gradient": np.array([6.0, math.inf])}, ValueError,
                         "gradient"),
    "gradient wrong shape": (PAIR, X, D, {"gradient": np.ones(3)}, ValueError, "gradient"),
    "objective not callable": (3.0, X, D, {}, TypeError, "objective"),
    # Issue 10 item 11: the fast path (1-D float arrays, value and gradient given) too.
    "value a string, fast path": (PAIR, X, D, {"value": "25.0", "gradient": 2 * X}, TypeError,
                                  "value"),
    "value a one-entry array, fast path": (PAIR, X, D, {"value": np.array([25.0]),
                                                        "gradient": 2 * X}, TypeError, "value"),
    "value complex": (PAIR, X, D, {"value": 25.0 + 1j}, TypeError, "value"),
    "value True": (PAIR, X, D, {"value": True}, TypeError, "value"),
    "x complex": (PAIR, X.astype(complex), D, {}, TypeError, "x"),
    "direction complex": (PAIR, X, D.astype(complex), {}, TypeError, "direction"),
    "gradient complex": (PAIR, X, D, {"gradient": (2 * X).astype(complex)}, TypeError,
                         "gradient"),
}

CALLS_SEARCH = {
    "objective value nan at x": ((lambda x: math.nan, square_gradient), X, D, {}, ValueError,
                                 "x"),
    "objective value inf at x": ((lambda x: math.inf, square_gradient), X, D, {}, ValueError,
                                 "x"),
    "objective gradient nan at x": ((square, lambda x: np.full(2, math.nan)), X, D, {},
                                    ValueError, "x"),
    "objective gradient wrong shape at x": ((square, lambda x: np.ones(5)), X, D, {},
                                            ValueError, "x"),
    "objective without gradient": (square, X, D, {}, TypeError, "gradient="),
}

CALL_CASES = [
    pytest.param(controller, *arguments, id=f"{controller}: {label}")
    for label, arguments in CALLS_ANY.items() for controller in CONTROLLERS
] + [
    pytest.param(controller, *arguments, id=f"{controller}: {label}")
    for label, arguments in CALLS_SEARCH.items() for controller in SEARCHES
]


@pytest.mark.parametrize(("controller", "objective", "x", "direction", "keywords", "error",
                          "name"), CALL_CASES)
def test_bad_call_argument(controller, objective, x, direction, keywords, error, name):
    with pytest.raises(error) as caught:
        CONTROLLERS[controller]()(objective, x, direction, **keywords)
    assert f"`{name}`" in str(caught.value)


def test_missing_gradient_message_says_how_to_pass_one():
    with pytest.raises(TypeError) as caught:
        Armijo()(square, X, D)
    message = str(caught.value)
    assert "Armijo needs the gradient" in message
    assert "`Objective(fun, grad)`" in message and "fused=True" in message


DESCEND = [
    case(lambda: descend(PAIR, np.array([1.0, math.nan])), ValueError, "x0", "x0 has NaN"),
    case(lambda: descend(PAIR, np.array([math.inf])), ValueError, "x0", "x0 has inf"),
    case(lambda: descend((lambda x: math.nan, square_gradient), X), ValueError, "x0",
         "f(x0) nan"),
    case(lambda: descend((lambda x: math.inf, square_gradient), X), ValueError, "x0",
         "f(x0) inf"),
    case(lambda: descend((square, lambda x: np.full(2, math.inf)), X), ValueError, "x0",
         "gradient at x0 inf"),
    case(lambda: descend((square, lambda x: np.ones(3)), X), ValueError, "x0",
         "gradient at x0 wrong shape"),
    case(lambda: descend(square, X), TypeError, "Objective(fun, grad)", "no gradient"),
    case(lambda: descend(PAIR, X, controller="armijo"), TypeError, "controller",
         "controller='armijo'"),
    case(lambda: descend(PAIR, X, direction=np.ones(2)), TypeError, "direction",
         "direction array"),
    # Issue 10 item 12: classes and non-callables are refused before any evaluation.
    says(lambda: descend(PAIR, X, controller=Armijo), TypeError,
         "`controller` must be an instance, not the class Armijo; write Armijo()",
         "controller=Armijo (the class)"),
    says(lambda: descend(PAIR, X, direction=LBFGS), TypeError,
         "`direction` must be an instance, not the class LBFGS; write LBFGS()",
         "direction=LBFGS (the class)"),
    says(lambda: descend(PAIR, X, stop=GradientNorm), TypeError,
         "`stop` must be an instance, not the class GradientNorm", "stop=GradientNorm (class)"),
    case(lambda: descend(PAIR, X, stop=5), TypeError, "stop", "stop=5"),
    case(lambda: descend(PAIR, X, callback=5), TypeError, "callback", "callback=5"),
    case(lambda: descend(PAIR, X, controller=lambda *a, **k: None), TypeError, "controller",
         "controller without reset()"),
    # Issue 10 item 9: answers other than a Verdict, None or a bool.
    case(lambda: descend(PAIR, X, stop=lambda progress: "stop"), TypeError, "stop",
         "stop returns a string"),
    case(lambda: descend(PAIR, X, stop=MaxIterations(5), callback=lambda progress: 1),
         TypeError, "callback", "callback returns 1"),
    case(lambda: descend(PAIR, X.astype(complex)), TypeError, "x0", "complex x0"),
]


@pytest.mark.parametrize(("build", "error", "pattern"), DESCEND)
def test_bad_descend_argument(build, error, pattern):
    with pytest.raises(error, match=pattern):
        build()


@pytest.mark.parametrize("build", [
    lambda: Armijo(c3=0.1),
    lambda: Armijo(0.1),  # options are keyword-only
    lambda: Goldstein(0.25),
    lambda: Goldstein(c1=0.25),
    lambda: Fixed(size=0.1, c1=0.5),
    lambda: Wolfe(sigma=0.9),
    lambda: Wolfe(1e-4),
    lambda: MoreThuente(ftol=1e-3),
    lambda: MoreThuente(1e-3),
    lambda: HagerZhang(0.1),
    lambda: NonmonotoneArmijo(10),
    lambda: NonmonotoneArmijo(window=10),
])
def test_unknown_or_positional_options_are_errors(build):
    with pytest.raises(TypeError):
        build()


# --- benchmark studies (issue 10: identities and inputs) ---------------------------------


def _study(**changes):
    from linestep.bench import Study, get_problem

    return Study(**{"problems": [get_problem("beale")], "controllers": [Armijo()],
                    "stop": MaxIterations(5), **changes})


class _Opaque:
    """A stopping rule whose content cannot be read (no parameters, no state, no pickle)."""

    __slots__ = ()

    def __call__(self, progress):
        return None

    def __deepcopy__(self, memo):
        return _Opaque()

    def __reduce__(self):
        raise TypeError("cannot pickle")


def _start(factor):
    from linestep.bench import Start

    return Start.scaled(factor)


STUDY = [
    case(lambda: _study(starts=[_start(10), _start(10.0)]), ValueError, "starts",
         "start-listed-twice"),
    says(lambda: _study(controllers={"a": Armijo(), "b": Armijo()}).tasks(), ValueError,
         "List each configuration once", "same-configuration-twice"),
    says(lambda: _study(stop=_Opaque()).tasks(), TypeError, "linestep_identity",
         "unidentifiable-stop"),
    says(lambda: _study(controllers=[Schedule(lambda k: 0.1), Schedule(lambda k: 0.1)]).tasks(),
         ValueError, "same computation", "equal-lambda-schedules"),
]


@pytest.mark.parametrize(("build", "error", "pattern"), STUDY)
def test_bad_study_argument(build, error, pattern):
    with pytest.raises(error, match=pattern):
        build()
