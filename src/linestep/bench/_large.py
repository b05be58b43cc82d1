"""Scalable unconstrained test problems for the ``large`` suite (n = 1e3 … 1e5).

Each problem is a small picklable class with vectorised numpy ``value`` and
``gradient`` methods costing O(n) per call (no Jacobian is formed), so that a
run at n = 10 000 measures the optimiser, not the test function. Definitions,
standard starts and optimal values come from two collections:

* [MGH] Moré, Garbow & Hillstrom 1981: problems 21–23, 25, 26 and 28–32, the
  variable-dimension members of their set (sums of squares Σ F_i², F_i as in
  the paper, m = 2n for the linear function 32).
* [A08] Andrei 2008: extended forms of small classic functions (pairs or
  quadruples of variables repeated n/2 or n/4 times) and separable or banded
  functions from the CUTE collection.

The formulas were written from memory of those papers (recalled from memory,
all of them), and every gradient is checked against central differences in
``tests/bench/test_large.py``. Known optimal values: 0 where the function is a
sum of squares or squares-like terms that vanish at a known point; otherwise
derived in closed form (and so labelled in the problem's `reference`), or, for
Penalty I, from the one-dimensional problem its symmetry reduces it to.

References
----------
.. [1] J. J. Moré, B. S. Garbow and K. E. Hillstrom, "Testing unconstrained
   optimization software", ACM Trans. Math. Software 7(1):17-41, 1981.
.. [2] N. Andrei, "An unconstrained optimization test functions collection",
   Advanced Modeling and Optimization 10(1):147-161, 2008.
"""

from __future__ import annotations

from typing import Any

import numpy as np

PENALTY_WEIGHT = 1.0e-5  # `a` in MGH problem 23 (Penalty I)
BROYDEN_BAND_LOWER = 5  # ml in MGH problem 31
BROYDEN_BAND_UPPER = 1  # mu in MGH problem 31
# Freudenstein–Roth's local minimum per pair of variables, MGH problem 2 (recalled
# from memory; checked numerically in tests/bench/test_large.py).
FREUDENSTEIN_ROTH_LOCAL = 48.9842


def _vector(x: Any) -> np.ndarray:
    return np.asarray(x, dtype=np.float64)


class LargeProblem:
    """Base of the scalable problems: n, the index vector i = 1..n, start and optimum.

    Subclasses set `name`, `source`, `multiple` (n must be a multiple of it) and
    implement `value`, `gradient` and `start_point`; `optimal_value` defaults to 0.
    """

    name = ""
    source = ""
    multiple = 1

    def __init__(self, dimension: int) -> None:
        if dimension % self.multiple or dimension < max(2, self.multiple):
            raise ValueError(
                f"`dimension` must be a multiple of {self.multiple} and at least "
                f"{max(2, self.multiple)} for {self.name}; got dimension={dimension}."
            )
        self.n = dimension
        self.index = np.arange(1, dimension + 1, dtype=np.float64)

    def start_point(self) -> np.ndarray:
        raise NotImplementedError

    def optimal_value(self) -> float:
        return 0.0

    def value(self, x: Any) -> float:
        raise NotImplementedError

    def gradient(self, x: Any) -> np.ndarray:
        raise NotImplementedError


# --- Moré, Garbow & Hillstrom 1981 -------------------------------------------------------


class ExtendedRosenbrock(LargeProblem):
    name = "extended_rosenbrock"
    source = "MGH 21; start (−1.2, 1) repeated; f* = 0 at x = 1"
    multiple = 2

    def start_point(self):
        return np.tile([-1.2, 1.0], self.n // 2)

    def value(self, x):
        x = _vector(x)
        odd, even = x[0::2], x[1::2]
        r = even - odd * odd
        s = 1.0 - odd
        return float(100.0 * (r @ r) + s @ s)

    def gradient(self, x):
        x = _vector(x)
        odd, even = x[0::2], x[1::2]
        r = even - odd * odd
        g = np.empty_like(x)
        g[0::2] = -400.0 * odd * r - 2.0 * (1.0 - odd)
        g[1::2] = 200.0 * r
        return g


class ExtendedPowellSingular(LargeProblem):
    name = "extended_powell_singular"
    source = "MGH 22; start (3, −1, 0, 1) repeated; f* = 0 at x = 0 (singular Hessian)"
    multiple = 4

    def start_point(self):
        return np.tile([3.0, -1.0, 0.0, 1.0], self.n // 4)

    @staticmethod
    def _parts(x):
        x1, x2, x3, x4 = x[0::4], x[1::4], x[2::4], x[3::4]
        return x1 + 10.0 * x2, x3 - x4, x2 - 2.0 * x3, x1 - x4

    def value(self, x):
        a, b, c, d = self._parts(_vector(x))
        c2, d2 = c * c, d * d
        return float(a @ a + 5.0 * (b @ b) + c2 @ c2 + 10.0 * (d2 @ d2))

    def gradient(self, x):
        x = _vector(x)
        a, b, c, d = self._parts(x)
        c3, d3 = c * c * c, d * d * d
        g = np.empty_like(x)
        g[0::4] = 2.0 * a + 40.0 * d3
        g[1::4] = 20.0 * a + 4.0 * c3
        g[2::4] = 10.0 * b - 8.0 * c3
        g[3::4] = -10.0 * b - 40.0 * d3
        return g


class PenaltyOne(LargeProblem):
    name = "penalty_1"
    source = ("MGH 23, a = 1e-5; start x_i = i; f* derived: by symmetry the minimiser is "
              "t·(1, …, 1) with t the root of 4n²t³ + (2a − 1)n·t − 2a·n = 0")

    def start_point(self):
        return self.index.copy()

    def optimal_value(self):
        n, a = self.n, PENALTY_WEIGHT
        roots = np.roots([4.0 * n * n, 0.0, (2.0 * a - 1.0) * n, -2.0 * a * n])
        values = [a * n * (t - 1.0) ** 2 + (n * t * t - 0.25) ** 2
                  for t in roots.real[np.abs(roots.imag) < 1e-12]]
        return float(min(values))

    def value(self, x):
        x = _vector(x)
        r = x - 1.0
        s = x @ x - 0.25
        return float(PENALTY_WEIGHT * (r @ r) + s * s)

    def gradient(self, x):
        x = _vector(x)
        return 2.0 * PENALTY_WEIGHT * (x - 1.0) + 4.0 * (x @ x - 0.25) * x


class VariablyDimensioned(LargeProblem):
    name = "variably_dimensioned"
    source = "MGH 25; start x_i = 1 − i/n; f* = 0 at x = 1"

    def start_point(self):
        return 1.0 - self.index / self.n

    def value(self, x):
        r = _vector(x) - 1.0
        s = float(self.index @ r)
        return float(r @ r) + s * s + s ** 4

    def gradient(self, x):
        r = _vector(x) - 1.0
        s = float(self.index @ r)
        return 2.0 * r + (2.0 * s + 4.0 * s ** 3) * self.index


class Trigonometric(LargeProblem):
    name = "trigonometric"
    source = "MGH 26; start x_i = 1/n; f* = 0 (local minima with f > 0 exist)"

    def start_point(self):
        return np.full(self.n, 1.0 / self.n)

    def _residuals(self, x):
        cos, sin = np.cos(x), np.sin(x)
        return self.n - cos.sum() + self.index * (1.0 - cos) - sin, cos, sin

    def value(self, x):
        f, _, _ = self._residuals(_vector(x))
        return float(f @ f)

    def gradient(self, x):
        f, cos, sin = self._residuals(_vector(x))
        return 2.0 * (sin * f.sum() + f * (self.index * sin - cos))


class DiscreteBoundaryValue(LargeProblem):
    name = "discrete_boundary_value"
    source = "MGH 28, h = 1/(n+1), t_i = i·h; start x_i = t_i(t_i − 1); f* = 0"

    def __init__(self, dimension):
        super().__init__(dimension)
        self.h = 1.0 / (dimension + 1)
        self.t = self.index * self.h

    def start_point(self):
        return self.t * (self.t - 1.0)

    def _residuals(self, x):
        padded = np.concatenate(([0.0], x, [0.0]))
        u = x + self.t + 1.0
        return 2.0 * x - padded[:-2] - padded[2:] + 0.5 * self.h ** 2 * u ** 3, u

    def value(self, x):
        f, _ = self._residuals(_vector(x))
        return float(f @ f)

    def gradient(self, x):
        f, u = self._residuals(_vector(x))
        padded = np.concatenate(([0.0], f, [0.0]))
        return 2.0 * (f * (2.0 + 1.5 * self.h ** 2 * u * u) - padded[:-2] - padded[2:])


class DiscreteIntegralEquation(LargeProblem):
    name = "discrete_integral_equation"
    source = ("MGH 29, h = 1/(n+1), t_i = i·h; start x_i = t_i(t_i − 1); f* = 0; the two "
              "sums of F_i are running sums, so a call costs O(n), not O(n²)")

    def __init__(self, dimension):
        super().__init__(dimension)
        self.h = 1.0 / (dimension + 1)
        self.t = self.index * self.h

    def start_point(self):
        return self.t * (self.t - 1.0)

    def _residuals(self, x):
        t = self.t
        w = x + t + 1.0
        cube = w * w * w
        lower = np.cumsum(t * cube)  # Σ_{j ≤ i} t_j w_j³
        tail = (1.0 - t) * cube
        upper = np.cumsum(tail[::-1])[::-1] - tail  # Σ_{j > i} (1 − t_j) w_j³
        return x + 0.5 * self.h * ((1.0 - t) * lower + t * upper), w

    def value(self, x):
        f, _ = self._residuals(_vector(x))
        return float(f @ f)

    def gradient(self, x):
        f, w = self._residuals(_vector(x))
        t = self.t
        tail = (1.0 - t) * f
        from_here = np.cumsum(tail[::-1])[::-1]  # Σ_{i ≥ j} (1 − t_i) F_i
        head = t * f
        before = np.cumsum(head) - head  # Σ_{i < j} t_i F_i
        return 2.0 * (f + 1.5 * self.h * w * w * (t * from_here + (1.0 - t) * before))


class BroydenTridiagonal(LargeProblem):
    name = "broyden_tridiagonal"
    source = "MGH 30; start x_i = −1; f* = 0"

    def start_point(self):
        return np.full(self.n, -1.0)

    @staticmethod
    def _residuals(x):
        padded = np.concatenate(([0.0], x, [0.0]))
        return (3.0 - 2.0 * x) * x - padded[:-2] - 2.0 * padded[2:] + 1.0

    def value(self, x):
        f = self._residuals(_vector(x))
        return float(f @ f)

    def gradient(self, x):
        x = _vector(x)
        f = self._residuals(x)
        padded = np.concatenate(([0.0], f, [0.0]))
        return 2.0 * ((3.0 - 4.0 * x) * f - padded[2:] - 2.0 * padded[:-2])


def _window_sums(v: np.ndarray, below: int, above: int) -> np.ndarray:
    """Σ_{j = i−below}^{i+above} v_j for each i (entries outside 1..n count 0), as shifted
    slices: exact sums, unlike differences of running sums."""
    n = v.size
    padded = np.concatenate((np.zeros(below), v, np.zeros(above)))
    total = np.zeros(n)
    for shift in range(below + above + 1):
        total += padded[shift:shift + n]
    return total


class BroydenBanded(LargeProblem):
    name = "broyden_banded"
    source = "MGH 31, ml = 5, mu = 1; start x_i = −1; f* = 0"

    def start_point(self):
        return np.full(self.n, -1.0)

    @staticmethod
    def _residuals(x):
        v = x * (1.0 + x)
        band = _window_sums(v, BROYDEN_BAND_LOWER, BROYDEN_BAND_UPPER) - v
        return x * (2.0 + 5.0 * x * x) + 1.0 - band

    def value(self, x):
        f = self._residuals(_vector(x))
        return float(f @ f)

    def gradient(self, x):
        x = _vector(x)
        f = self._residuals(x)
        # x_j enters F_i for j − mu ≤ i ≤ j + ml, i ≠ j.
        band = _window_sums(f, BROYDEN_BAND_UPPER, BROYDEN_BAND_LOWER) - f
        return 2.0 * (f * (2.0 + 15.0 * x * x) - (1.0 + 2.0 * x) * band)


class LinearFullRank(LargeProblem):
    name = "linear_full_rank"
    source = "MGH 32 with m = 2n; start x_i = 1; f* = m − n = n at x = −1"

    def start_point(self):
        return np.ones(self.n)

    def optimal_value(self):
        return float(self.n)

    def value(self, x):
        x = _vector(x)
        m = 2 * self.n
        c = 2.0 * x.sum() / m + 1.0
        r = x - c
        return float(r @ r + (m - self.n) * c * c)

    def gradient(self, x):
        x = _vector(x)
        m = 2 * self.n
        total = x.sum()
        # ∂f/∂x_j = 2(F_j − (2/m) Σ_i F_i) and Σ_i F_i = −Σx − m over all m residuals.
        return 2.0 * (x - (2.0 * total / m + 1.0) + 2.0 * (total + m) / m)


# --- Andrei 2008 -----------------------------------------------------------------------


class ExtendedFreudensteinRoth(LargeProblem):
    name = "extended_freudenstein_roth"
    source = ("A08 (MGH 2 extended); start (0.5, −2) repeated; f* = 0 at (5, 4) repeated; "
              "the pairs are independent and start alike, so a run ends with every pair at "
              "one of the two minima of MGH 2: f = 0 or (n/2)·48.9842")
    multiple = 2

    def start_point(self):
        return np.tile([0.5, -2.0], self.n // 2)

    @staticmethod
    def _parts(x):
        x1, x2 = x[0::2], x[1::2]
        p = -13.0 + x1 + ((5.0 - x2) * x2 - 2.0) * x2
        q = -29.0 + x1 + ((x2 + 1.0) * x2 - 14.0) * x2
        return x2, p, q

    def value(self, x):
        _, p, q = self._parts(_vector(x))
        return float(p @ p + q @ q)

    def gradient(self, x):
        x = _vector(x)
        x2, p, q = self._parts(x)
        g = np.empty_like(x)
        g[0::2] = 2.0 * (p + q)
        g[1::2] = 2.0 * (p * ((10.0 - 3.0 * x2) * x2 - 2.0) + q * ((3.0 * x2 + 2.0) * x2 - 14.0))
        return g


class ExtendedBeale(LargeProblem):
    name = "extended_beale"
    source = ("A08 (MGH 5 extended); start (1, 0.8) repeated (A08's start; MGH 5 starts at "
              "(1, 1)); f* = 0 at (3, 0.5) repeated")
    multiple = 2
    constants = (1.5, 2.25, 2.625)

    def start_point(self):
        return np.tile([1.0, 0.8], self.n // 2)

    def value(self, x):
        x = _vector(x)
        x1, x2 = x[0::2], x[1::2]
        total = 0.0
        power = np.ones_like(x2)
        for c in self.constants:
            power = power * x2
            r = c - x1 * (1.0 - power)
            total += float(r @ r)
        return total

    def gradient(self, x):
        x = _vector(x)
        x1, x2 = x[0::2], x[1::2]
        g1, g2 = np.zeros_like(x1), np.zeros_like(x2)
        previous = np.ones_like(x2)  # x2^(k−1)
        for k, c in enumerate(self.constants, start=1):
            power = previous * x2
            r = c - x1 * (1.0 - power)
            g1 -= 2.0 * r * (1.0 - power)
            g2 += 2.0 * r * x1 * k * previous
            previous = power
        g = np.empty_like(x)
        g[0::2], g[1::2] = g1, g2
        return g


class ExtendedWood(LargeProblem):
    name = "extended_wood"
    source = "A08 (MGH 14 extended); start (−3, −1, −3, −1) repeated; f* = 0 at x = 1"
    multiple = 4

    def start_point(self):
        return np.tile([-3.0, -1.0, -3.0, -1.0], self.n // 4)

    def value(self, x):
        x = _vector(x)
        x1, x2, x3, x4 = x[0::4], x[1::4], x[2::4], x[3::4]
        a, b = x1 * x1 - x2, x3 * x3 - x4
        u, v, w, z = x1 - 1.0, x3 - 1.0, x2 - 1.0, x4 - 1.0
        return float(100.0 * (a @ a) + u @ u + 90.0 * (b @ b) + v @ v
                     + 10.1 * (w @ w + z @ z) + 19.8 * (w @ z))

    def gradient(self, x):
        x = _vector(x)
        x1, x2, x3, x4 = x[0::4], x[1::4], x[2::4], x[3::4]
        a, b = x1 * x1 - x2, x3 * x3 - x4
        w, z = x2 - 1.0, x4 - 1.0
        g = np.empty_like(x)
        g[0::4] = 400.0 * x1 * a + 2.0 * (x1 - 1.0)
        g[1::4] = -200.0 * a + 20.2 * w + 19.8 * z
        g[2::4] = 360.0 * x3 * b + 2.0 * (x3 - 1.0)
        g[3::4] = -180.0 * b + 20.2 * z + 19.8 * w
        return g


class ExtendedWhiteHolst(LargeProblem):
    name = "extended_white_holst"
    source = "A08; start (−1.2, 1) repeated; f* = 0 at x = 1"
    multiple = 2

    def start_point(self):
        return np.tile([-1.2, 1.0], self.n // 2)

    def value(self, x):
        x = _vector(x)
        odd, even = x[0::2], x[1::2]
        r = even - odd ** 3
        s = 1.0 - odd
        return float(100.0 * (r @ r) + s @ s)

    def gradient(self, x):
        x = _vector(x)
        odd, even = x[0::2], x[1::2]
        r = even - odd ** 3
        g = np.empty_like(x)
        g[0::2] = -600.0 * odd * odd * r - 2.0 * (1.0 - odd)
        g[1::2] = 200.0 * r
        return g


class ExtendedTridiagonalOne(LargeProblem):
    name = "extended_tridiagonal_1"
    source = "A08; start x_i = 2; f* = 0 at (1, 2) repeated"
    multiple = 2

    def start_point(self):
        return np.full(self.n, 2.0)

    def value(self, x):
        x = _vector(x)
        a = x[0::2] + x[1::2] - 3.0
        b = x[0::2] - x[1::2] + 1.0
        b2 = b * b
        return float(a @ a + b2 @ b2)

    def gradient(self, x):
        x = _vector(x)
        a = x[0::2] + x[1::2] - 3.0
        b = x[0::2] - x[1::2] + 1.0
        g = np.empty_like(x)
        g[0::2] = 2.0 * a + 4.0 * b ** 3
        g[1::2] = 2.0 * a - 4.0 * b ** 3
        return g


class RaydanOne(LargeProblem):
    name = "raydan_1"
    source = "A08, Σ (i/10)(exp(x_i) − x_i); start x_i = 1; f* = n(n+1)/20 at x = 0 (derived)"

    def start_point(self):
        return np.ones(self.n)

    def optimal_value(self):
        return self.n * (self.n + 1) / 20.0

    def value(self, x):
        x = _vector(x)
        return float(self.index @ (np.exp(x) - x)) / 10.0

    def gradient(self, x):
        return self.index * (np.exp(_vector(x)) - 1.0) / 10.0


class PerturbedQuadratic(LargeProblem):
    name = "perturbed_quadratic"
    source = "A08, Σ i·x_i² + (Σ x_i)²/100; start x_i = 0.5; f* = 0 at x = 0"

    def start_point(self):
        return np.full(self.n, 0.5)

    def value(self, x):
        x = _vector(x)
        s = x.sum()
        return float(self.index @ (x * x)) + s * s / 100.0

    def gradient(self, x):
        x = _vector(x)
        return 2.0 * self.index * x + x.sum() / 50.0


class QuadraticOne(LargeProblem):
    name = "quadratic_qf1"
    source = ("A08 (quadratic QF1), ½ Σ i·x_i² − x_n; start x_i = 1; f* = −1/(2n) at "
              "x = e_n/n (derived)")

    def start_point(self):
        return np.ones(self.n)

    def optimal_value(self):
        return -0.5 / self.n

    def value(self, x):
        x = _vector(x)
        return 0.5 * float(self.index @ (x * x)) - float(x[-1])

    def gradient(self, x):
        g = self.index * _vector(x)
        g[-1] -= 1.0
        return g


class Liarwhd(LargeProblem):
    name = "liarwhd"
    source = "A08 (CUTE LIARWHD), Σ 4(x_i² − x_1)² + (x_i − 1)²; start x_i = 4; f* = 0 at x = 1"

    def start_point(self):
        return np.full(self.n, 4.0)

    def value(self, x):
        x = _vector(x)
        r = x * x - x[0]
        s = x - 1.0
        return float(4.0 * (r @ r) + s @ s)

    def gradient(self, x):
        x = _vector(x)
        r = x * x - x[0]
        g = 16.0 * x * r + 2.0 * (x - 1.0)
        g[0] -= 8.0 * r.sum()
        return g


class Arwhead(LargeProblem):
    name = "arwhead"
    source = ("A08 (CUTE ARWHEAD), Σ_{i<n} (−4x_i + 3) + (x_i² + x_n²)²; start x_i = 1; "
              "f* = 0 at (1, …, 1, 0)")

    def start_point(self):
        return np.ones(self.n)

    def value(self, x):
        x = _vector(x)
        head = x[:-1]
        w = head * head + x[-1] * x[-1]
        return float(np.sum(3.0 - 4.0 * head) + w @ w)

    def gradient(self, x):
        x = _vector(x)
        head = x[:-1]
        w = head * head + x[-1] * x[-1]
        g = np.empty_like(x)
        g[:-1] = -4.0 + 4.0 * head * w
        g[-1] = 4.0 * x[-1] * w.sum()
        return g


class Dqdrtic(LargeProblem):
    name = "dqdrtic"
    source = ("A08 (CUTE DQDRTIC), Σ_{i ≤ n−2} x_i² + 100 x_{i+1}² + 100 x_{i+2}²; "
              "start x_i = 3; f* = 0 at x = 0")

    def __init__(self, dimension):
        super().__init__(dimension)
        weight = np.zeros(dimension)
        weight[:-2] += 1.0
        weight[1:-1] += 100.0
        weight[2:] += 100.0
        self.weight = weight  # f = Σ weight_i x_i²

    def start_point(self):
        return np.full(self.n, 3.0)

    def value(self, x):
        x = _vector(x)
        return float(self.weight @ (x * x))

    def gradient(self, x):
        return 2.0 * self.weight * _vector(x)


class Tridia(LargeProblem):
    name = "tridia"
    source = ("A08 (CUTE TRIDIA), (x_1 − 1)² + Σ_{i ≥ 2} i(2x_i − x_{i−1})²; start x_i = 1; "
              "f* = 0 at x_i = 2^(1−i)")

    def start_point(self):
        return np.ones(self.n)

    def value(self, x):
        x = _vector(x)
        r = 2.0 * x[1:] - x[:-1]
        return float((x[0] - 1.0) ** 2 + self.index[1:] @ (r * r))

    def gradient(self, x):
        x = _vector(x)
        weighted = self.index[1:] * (2.0 * x[1:] - x[:-1])  # i·r_i, i = 2..n
        g = np.zeros_like(x)
        g[0] = 2.0 * (x[0] - 1.0)
        g[1:] += 4.0 * weighted
        g[:-1] -= 2.0 * weighted
        return g


LARGE_PROBLEMS: tuple[type[LargeProblem], ...] = (
    ExtendedRosenbrock, ExtendedPowellSingular, PenaltyOne, VariablyDimensioned,
    Trigonometric, DiscreteBoundaryValue, DiscreteIntegralEquation, BroydenTridiagonal,
    BroydenBanded, LinearFullRank, ExtendedFreudensteinRoth, ExtendedBeale, ExtendedWood,
    ExtendedWhiteHolst, ExtendedTridiagonalOne, RaydanOne, PerturbedQuadratic, QuadraticOne,
    Liarwhd, Arwhead, Dqdrtic, Tridia,
)


def optimal_values(problem: LargeProblem) -> tuple[float, ...]:
    """The optimal value and, where a source lists one, the local value runs may end at."""
    if isinstance(problem, ExtendedFreudensteinRoth):
        return (0.0, problem.n / 2 * FREUDENSTEIN_ROTH_LOCAL)
    return (problem.optimal_value(),)

