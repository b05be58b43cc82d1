"""Residuals of the Moré–Garbow–Hillstrom test problems, in the paper's numbering.

Every problem of the set is a sum of squares ``f(x) = sum_i F_i(x)**2``. Each
function here maps a float64 point ``x`` to ``(F, vjp)``: the residual vector
``F(x)`` and a function ``vjp(w)`` returning the Jacobian-transpose product
``J(x)^T w``, so that ``grad f(x) = 2 J(x)^T F(x)``. Small fixed-size problems
build their Jacobian densely (at most 99 x 11); the variable-dimension problems
apply ``J^T`` in O(n) or O(n m) work without forming ``J`` where that is possible.

Data tables and published optimal values were transcribed from the paper; where
this was done from recollection the line says "recalled from memory", and every
such number is checked numerically in ``tests/bench/test_problems.py``.

References
----------
.. [1] J. J. Moré, B. S. Garbow and K. E. Hillstrom, "Testing unconstrained
   optimization software", ACM Trans. Math. Software 7(1):17-41, 1981.
"""

from __future__ import annotations

import math

import numpy as np

TWO_PI = 2.0 * math.pi
PENALTY_WEIGHT = 1.0e-5  # `a` in problems 23 and 24
GULF_RESIDUALS = 99  # m for problem 11; the paper allows 3 <= m <= 100 (f* = 0 for every m)
BROYDEN_BAND_LOWER = 5  # ml in problem 31
BROYDEN_BAND_UPPER = 1  # mu in problem 31


def _dense(residual, jacobian):
    """Pair a residual with the transpose product of an explicit Jacobian."""
    return residual, jacobian.T.dot


# --- data tables (MGH 1981, section 3) ------------------------------------------------

# Problem 8 (Bard): y_i, i = 1..15. Recalled from memory.
BARD_Y = np.array(
    [0.14, 0.18, 0.22, 0.25, 0.29, 0.32, 0.35, 0.39,
     0.37, 0.58, 0.73, 0.96, 1.34, 2.10, 4.39]
)  # fmt: skip

# Problem 9 (Gaussian): y_i, i = 1..15, symmetric about i = 8. Recalled from memory.
GAUSSIAN_Y = np.array(
    [0.0009, 0.0044, 0.0175, 0.0540, 0.1295, 0.2420, 0.3521, 0.3989,
     0.3521, 0.2420, 0.1295, 0.0540, 0.0175, 0.0044, 0.0009]
)  # fmt: skip

# Problem 10 (Meyer): y_i, i = 1..16. Recalled from memory.
MEYER_Y = np.array(
    [34780.0, 28610.0, 23650.0, 19630.0, 16370.0, 13720.0, 11540.0, 9744.0,
     8261.0, 7030.0, 6005.0, 5147.0, 4427.0, 3820.0, 3307.0, 2872.0]
)  # fmt: skip

# Problem 15 (Kowalik and Osborne): y_i and u_i, i = 1..11. Recalled from memory.
KOWALIK_OSBORNE_Y = np.array(
    [0.1957, 0.1947, 0.1735, 0.1600, 0.0844, 0.0627,
     0.0456, 0.0342, 0.0323, 0.0235, 0.0246]
)  # fmt: skip
KOWALIK_OSBORNE_U = np.array([4.0, 2.0, 1.0, 0.5, 0.25, 0.167, 0.125, 0.1, 0.0833, 0.0714, 0.0625])

# Problem 17 (Osborne 1): y_i, i = 1..33. Recalled from memory.
OSBORNE_1_Y = np.array(
    [0.844, 0.908, 0.932, 0.936, 0.925, 0.908, 0.881, 0.850, 0.818, 0.784,
     0.751, 0.718, 0.685, 0.658, 0.628, 0.603, 0.580, 0.558, 0.538, 0.522,
     0.506, 0.490, 0.478, 0.467, 0.457, 0.448, 0.438, 0.431, 0.424, 0.420,
     0.414, 0.411, 0.406]
)  # fmt: skip

# Problem 19 (Osborne 2): y_i, i = 1..65. Recalled from memory.
OSBORNE_2_Y = np.array(
    [1.366, 1.191, 1.112, 1.013, 0.991, 0.885, 0.831, 0.847, 0.786, 0.725,
     0.746, 0.679, 0.608, 0.655, 0.616, 0.606, 0.602, 0.626, 0.651, 0.724,
     0.649, 0.649, 0.694, 0.644, 0.624, 0.661, 0.612, 0.558, 0.533, 0.495,
     0.500, 0.423, 0.395, 0.375, 0.372, 0.391, 0.396, 0.405, 0.428, 0.429,
     0.523, 0.562, 0.607, 0.653, 0.672, 0.708, 0.633, 0.668, 0.645, 0.632,
     0.591, 0.559, 0.597, 0.625, 0.739, 0.710, 0.729, 0.720, 0.636, 0.581,
     0.428, 0.292, 0.162, 0.098, 0.054]
)  # fmt: skip


# --- problems 1-19: fixed n and m ---------------------------------------------------


def rosenbrock(x):
    """Problem 1, n = m = 2."""
    x1, x2 = x
    residual = np.array([10.0 * (x2 - x1**2), 1.0 - x1])
    jacobian = np.array([[-20.0 * x1, 10.0], [-1.0, 0.0]])
    return _dense(residual, jacobian)


def freudenstein_roth(x):
    """Problem 2, n = m = 2."""
    x1, x2 = x
    residual = np.array(
        [
            -13.0 + x1 + ((5.0 - x2) * x2 - 2.0) * x2,
            -29.0 + x1 + ((x2 + 1.0) * x2 - 14.0) * x2,
        ]
    )
    jacobian = np.array(
        [
            [1.0, (10.0 - 3.0 * x2) * x2 - 2.0],
            [1.0, (3.0 * x2 + 2.0) * x2 - 14.0],
        ]
    )
    return _dense(residual, jacobian)


def powell_badly_scaled(x):
    """Problem 3, n = m = 2."""
    x1, x2 = x
    e1, e2 = np.exp(-x1), np.exp(-x2)
    residual = np.array([1.0e4 * x1 * x2 - 1.0, e1 + e2 - 1.0001])
    jacobian = np.array([[1.0e4 * x2, 1.0e4 * x1], [-e1, -e2]])
    return _dense(residual, jacobian)


def brown_badly_scaled(x):
    """Problem 4, n = 2, m = 3."""
    x1, x2 = x
    residual = np.array([x1 - 1.0e6, x2 - 2.0e-6, x1 * x2 - 2.0])
    jacobian = np.array([[1.0, 0.0], [0.0, 1.0], [x2, x1]])
    return _dense(residual, jacobian)


def beale(x):
    """Problem 5, n = 2, m = 3."""
    x1, x2 = x
    i = np.arange(1, 4)
    y = np.array([1.5, 2.25, 2.625])
    power = x2**i
    residual = y - x1 * (1.0 - power)
    jacobian = np.column_stack([power - 1.0, x1 * i * x2 ** (i - 1)])
    return _dense(residual, jacobian)


def jennrich_sampson(x):
    """Problem 6, n = 2, m = 10."""
    x1, x2 = x
    i = np.arange(1, 11)
    e1, e2 = np.exp(i * x1), np.exp(i * x2)
    residual = 2.0 + 2.0 * i - (e1 + e2)
    jacobian = np.column_stack([-i * e1, -i * e2])
    return _dense(residual, jacobian)


def _helix_angle(x1, x2):
    """theta(x1, x2) of problem 7: arctan(x2/x1)/(2 pi), plus 1/2 when x1 < 0."""
    if x1 > 0.0:
        return math.atan(x2 / x1) / TWO_PI
    if x1 < 0.0:
        return math.atan(x2 / x1) / TWO_PI + 0.5
    return 0.25 * math.copysign(1.0, x2) if x2 != 0.0 else 0.0  # limit from x1 > 0


def helical_valley(x):
    """Problem 7, n = m = 3."""
    x1, x2, x3 = (float(v) for v in x)
    radius_sq = x1 * x1 + x2 * x2
    radius = math.sqrt(radius_sq)
    residual = np.array([10.0 * (x3 - 10.0 * _helix_angle(x1, x2)), 10.0 * (radius - 1.0), x3])
    with np.errstate(divide="ignore", invalid="ignore"):
        d_angle = np.array([-x2, x1]) / (TWO_PI * np.float64(radius_sq))
        d_radius = np.array([x1, x2]) / np.float64(radius)
    jacobian = np.array(
        [
            [-100.0 * d_angle[0], -100.0 * d_angle[1], 10.0],
            [10.0 * d_radius[0], 10.0 * d_radius[1], 0.0],
            [0.0, 0.0, 1.0],
        ]
    )
    return _dense(residual, jacobian)


def bard(x):
    """Problem 8, n = 3, m = 15."""
    x1, x2, x3 = x
    u = np.arange(1.0, 16.0)
    v = 16.0 - u
    w = np.minimum(u, v)
    denominator = v * x2 + w * x3
    residual = BARD_Y - (x1 + u / denominator)
    scale = u / denominator**2
    jacobian = np.column_stack([-np.ones_like(u), scale * v, scale * w])
    return _dense(residual, jacobian)


def gaussian(x):
    """Problem 9, n = 3, m = 15."""
    x1, x2, x3 = x
    t = (8.0 - np.arange(1, 16)) / 2.0
    offset = t - x3
    bump = np.exp(-0.5 * x2 * offset**2)
    residual = x1 * bump - GAUSSIAN_Y
    jacobian = np.column_stack([bump, -0.5 * x1 * bump * offset**2, x1 * x2 * bump * offset])
    return _dense(residual, jacobian)


def meyer(x):
    """Problem 10, n = 3, m = 16."""
    x1, x2, x3 = x
    t = 45.0 + 5.0 * np.arange(1, 17)
    shifted = t + x3
    growth = np.exp(x2 / shifted)
    residual = x1 * growth - MEYER_Y
    jacobian = np.column_stack([growth, x1 * growth / shifted, -x1 * x2 * growth / shifted**2])
    return _dense(residual, jacobian)


def gulf(x):
    """Problem 11, n = 3, m = GULF_RESIDUALS."""
    x1, x2, x3 = x
    t = np.arange(1, GULF_RESIDUALS + 1) / 100.0
    y = 25.0 + (-50.0 * np.log(t)) ** (2.0 / 3.0)
    offset = y - x2
    distance = np.abs(offset)
    power = distance**x3
    decay = np.exp(-power / x1)
    residual = decay - t
    positive = distance > 0.0
    safe = np.where(positive, distance, 1.0)
    log_distance = np.where(positive, np.log(safe), 0.0)
    # d|u|^x3/dx2 = -x3 |u|^(x3-1) sign(u); zero where u = 0 (x3 > 1 near the solution)
    d_power_dx2 = np.where(positive, -x3 * safe ** (x3 - 1.0) * np.sign(offset), 0.0)
    jacobian = np.column_stack(
        [
            decay * power / x1**2,
            -decay * d_power_dx2 / x1,
            -decay * power * log_distance / x1,
        ]
    )
    return _dense(residual, jacobian)


def box_3d(x):
    """Problem 12, n = 3, m = 10."""
    x1, x2, x3 = x
    t = 0.1 * np.arange(1, 11)
    e1, e2 = np.exp(-t * x1), np.exp(-t * x2)
    data = np.exp(-t) - np.exp(-10.0 * t)
    residual = e1 - e2 - x3 * data
    jacobian = np.column_stack([-t * e1, t * e2, -data])
    return _dense(residual, jacobian)


def powell_singular(x):
    """Problem 13, n = m = 4."""
    return extended_powell_singular(x)


def wood(x):
    """Problem 14, n = 4, m = 6."""
    x1, x2, x3, x4 = x
    r90, r10 = math.sqrt(90.0), math.sqrt(10.0)
    residual = np.array(
        [
            10.0 * (x2 - x1**2),
            1.0 - x1,
            r90 * (x4 - x3**2),
            1.0 - x3,
            r10 * (x2 + x4 - 2.0),
            (x2 - x4) / r10,
        ]
    )
    jacobian = np.array(
        [
            [-20.0 * x1, 10.0, 0.0, 0.0],
            [-1.0, 0.0, 0.0, 0.0],
            [0.0, 0.0, -2.0 * r90 * x3, r90],
            [0.0, 0.0, -1.0, 0.0],
            [0.0, r10, 0.0, r10],
            [0.0, 1.0 / r10, 0.0, -1.0 / r10],
        ]
    )
    return _dense(residual, jacobian)


def kowalik_osborne(x):
    """Problem 15, n = 4, m = 11."""
    x1, x2, x3, x4 = x
    u = KOWALIK_OSBORNE_U
    numerator = u * (u + x2)
    denominator = u * (u + x3) + x4
    ratio = numerator / denominator
    residual = KOWALIK_OSBORNE_Y - x1 * ratio
    jacobian = np.column_stack(
        [
            -ratio,
            -x1 * u / denominator,
            x1 * ratio * u / denominator,
            x1 * ratio / denominator,
        ]
    )
    return _dense(residual, jacobian)


def brown_dennis(x):
    """Problem 16, n = 4, m = 20."""
    x1, x2, x3, x4 = x
    t = np.arange(1, 21) / 5.0
    sin_t = np.sin(t)
    a = x1 + t * x2 - np.exp(t)
    b = x3 + x4 * sin_t - np.cos(t)
    residual = a**2 + b**2
    jacobian = 2.0 * np.column_stack([a, a * t, b, b * sin_t])
    return _dense(residual, jacobian)


def osborne_1(x):
    """Problem 17, n = 5, m = 33."""
    x1, x2, x3, x4, x5 = x
    t = 10.0 * np.arange(33)
    e4, e5 = np.exp(-t * x4), np.exp(-t * x5)
    residual = OSBORNE_1_Y - (x1 + x2 * e4 + x3 * e5)
    jacobian = np.column_stack([-np.ones_like(t), -e4, -e5, x2 * t * e4, x3 * t * e5])
    return _dense(residual, jacobian)


def biggs_exp6(x):
    """Problem 18, n = 6, m = 13."""
    x1, x2, x3, x4, x5, x6 = x
    t = 0.1 * np.arange(1, 14)
    y = np.exp(-t) - 5.0 * np.exp(-10.0 * t) + 3.0 * np.exp(-4.0 * t)
    e1, e2, e5 = np.exp(-t * x1), np.exp(-t * x2), np.exp(-t * x5)
    residual = x3 * e1 - x4 * e2 + x6 * e5 - y
    jacobian = np.column_stack([-t * x3 * e1, t * x4 * e2, e1, -e2, -t * x6 * e5, e5])
    return _dense(residual, jacobian)


def osborne_2(x):
    """Problem 19, n = 11, m = 65."""
    t = np.arange(65) / 10.0
    decay = np.exp(-t * x[4])
    model = x[0] * decay
    columns = np.zeros((65, 11))
    columns[:, 0] = -decay
    columns[:, 4] = x[0] * t * decay
    # three Gaussian bumps: amplitude x[k], width x[k + 4], centre x[k + 7], k = 1, 2, 3
    for k in (1, 2, 3):
        offset = t - x[k + 7]
        bump = np.exp(-(offset**2) * x[k + 4])
        model = model + x[k] * bump
        columns[:, k] = -bump
        columns[:, k + 4] = x[k] * offset**2 * bump
        columns[:, k + 7] = -2.0 * x[k] * x[k + 4] * offset * bump
    return _dense(OSBORNE_2_Y - model, columns)


# --- problems 20-35: variable n (and m) ------------------------------------------


def watson(x):
    """Problem 20, 2 <= n <= 31, m = 31."""
    n = x.size
    t = np.arange(1, 30) / 29.0
    powers = t[:, None] ** np.arange(n)  # t_i^(j-1), j = 1..n
    slopes = np.zeros_like(powers)
    slopes[:, 1:] = np.arange(1, n) * powers[:, :-1]  # (j-1) t_i^(j-2)
    polynomial = powers @ x
    residual = np.concatenate([slopes @ x - polynomial**2 - 1.0, [x[0], x[1] - x[0] ** 2 - 1.0]])

    def vjp(w):
        main = w[:29]
        grad = main @ slopes - 2.0 * (main * polynomial) @ powers
        grad[0] += w[29] - 2.0 * x[0] * w[30]
        grad[1] += w[30]
        return grad

    return residual, vjp


def extended_rosenbrock(x):
    """Problem 21, n even, m = n."""
    pairs = x.reshape(-1, 2)
    odd, even = pairs[:, 0], pairs[:, 1]
    residual = np.column_stack([10.0 * (even - odd**2), 1.0 - odd]).ravel()

    def vjp(w):
        w = w.reshape(-1, 2)
        return np.column_stack([-20.0 * odd * w[:, 0] - w[:, 1], 10.0 * w[:, 0]]).ravel()

    return residual, vjp


def extended_powell_singular(x):
    """Problem 22 (problem 13 when n = 4), n a multiple of 4, m = n."""
    r5, r10 = math.sqrt(5.0), math.sqrt(10.0)
    a, b, c, d = x.reshape(-1, 4).T
    bc = b - 2.0 * c
    ad = a - d
    residual = np.column_stack([a + 10.0 * b, r5 * (c - d), bc**2, r10 * ad**2]).ravel()

    def vjp(w):
        w1, w2, w3, w4 = w.reshape(-1, 4).T
        return np.column_stack(
            [
                w1 + 2.0 * r10 * ad * w4,
                10.0 * w1 + 2.0 * bc * w3,
                r5 * w2 - 4.0 * bc * w3,
                -r5 * w2 - 2.0 * r10 * ad * w4,
            ]
        ).ravel()

    return residual, vjp


def penalty_1(x):
    """Problem 23, n variable, m = n + 1."""
    root_a = math.sqrt(PENALTY_WEIGHT)
    residual = np.append(root_a * (x - 1.0), x @ x - 0.25)

    def vjp(w):
        return root_a * w[:-1] + 2.0 * w[-1] * x

    return residual, vjp


def penalty_2(x):
    """Problem 24, n variable, m = 2n."""
    n = x.size
    root_a = math.sqrt(PENALTY_WEIGHT)
    grow = np.exp(x / 10.0)
    i = np.arange(2, n + 1)
    y = np.exp(i / 10.0) + np.exp((i - 1) / 10.0)
    weights = n - np.arange(n)  # n - j + 1, j = 1..n
    residual = np.concatenate(
        [
            [x[0] - 0.2],
            root_a * (grow[1:] + grow[:-1] - y),
            root_a * (grow[1:] - math.exp(-0.1)),
            [weights @ x**2 - 1.0],
        ]
    )

    def vjp(w):
        pairs, tails, last = w[1:n], w[n : 2 * n - 1], w[-1]
        grad = 2.0 * last * weights * x
        grad[0] += w[0]
        grad[1:] += root_a * (pairs + tails) * grow[1:] / 10.0
        grad[:-1] += root_a * pairs * grow[:-1] / 10.0
        return grad

    return residual, vjp


def variably_dimensioned(x):
    """Problem 25, n variable, m = n + 2."""
    j = np.arange(1, x.size + 1)
    s = j @ (x - 1.0)
    residual = np.concatenate([x - 1.0, [s, s * s]])

    def vjp(w):
        return w[:-2] + (w[-2] + 2.0 * s * w[-1]) * j

    return residual, vjp


def trigonometric(x):
    """Problem 26, n variable, m = n."""
    n = x.size
    i = np.arange(1, n + 1)
    cos_x, sin_x = np.cos(x), np.sin(x)
    residual = n - cos_x.sum() + i * (1.0 - cos_x) - sin_x

    def vjp(w):
        return sin_x * w.sum() + w * (i * sin_x - cos_x)

    return residual, vjp


def _products_of_others(x):
    """prod_{j != k} x_j for every k, without dividing (x may hold zeros)."""
    before = np.concatenate([[1.0], np.cumprod(x[:-1])])
    after = np.concatenate([np.cumprod(x[:0:-1])[::-1], [1.0]])
    return before * after


def brown_almost_linear(x):
    """Problem 27, n variable, m = n."""
    n = x.size
    residual = np.append(x[:-1] + x.sum() - (n + 1.0), np.prod(x) - 1.0)

    def vjp(w):
        linear = w[:-1]
        grad = np.full(n, linear.sum())
        grad[:-1] += linear
        return grad + w[-1] * _products_of_others(x)

    return residual, vjp


def _grid(n):
    """h = 1/(n+1) and t_i = i h, i = 1..n (problems 28 and 29)."""
    h = 1.0 / (n + 1)
    return h, h * np.arange(1, n + 1)


def discrete_boundary_value(x):
    """Problem 28, n variable, m = n."""
    h, t = _grid(x.size)
    shifted = x + t + 1.0
    residual = 2.0 * x + 0.5 * h * h * shifted**3
    residual[1:] -= x[:-1]
    residual[:-1] -= x[1:]

    def vjp(w):
        grad = w * (2.0 + 1.5 * h * h * shifted**2)
        grad[:-1] -= w[1:]
        grad[1:] -= w[:-1]
        return grad

    return residual, vjp


def _reverse_cumsum(v):
    """s_i = sum_{j >= i} v_j."""
    return np.cumsum(v[::-1])[::-1]


def discrete_integral_equation(x):
    """Problem 29, n variable, m = n."""
    h, t = _grid(x.size)
    shifted = x + t + 1.0
    cube = shifted**3
    upto = np.cumsum(t * cube)  # sum_{j <= i} t_j c_j
    beyond = np.append(_reverse_cumsum((1.0 - t) * cube)[1:], 0.0)  # sum_{j > i}
    residual = x + 0.5 * h * ((1.0 - t) * upto + t * beyond)

    def vjp(w):
        from_rows_at_or_after = _reverse_cumsum(w * (1.0 - t))  # rows i >= j
        from_rows_before = np.concatenate([[0.0], np.cumsum(w * t)[:-1]])  # rows i < j
        mixed = t * from_rows_at_or_after + (1.0 - t) * from_rows_before
        return w + 1.5 * h * shifted**2 * mixed

    return residual, vjp


def broyden_tridiagonal(x):
    """Problem 30, n variable, m = n."""
    residual = (3.0 - 2.0 * x) * x + 1.0
    residual[1:] -= x[:-1]
    residual[:-1] -= 2.0 * x[1:]

    def vjp(w):
        grad = w * (3.0 - 4.0 * x)
        grad[:-1] -= w[1:]
        grad[1:] -= 2.0 * w[:-1]
        return grad

    return residual, vjp


# offsets j - i of the neighbours J_i in problem 31
_BAND_OFFSETS = (*range(-BROYDEN_BAND_LOWER, 0), *range(1, BROYDEN_BAND_UPPER + 1))


def _band_sum(values, *, transpose=False):
    """sum_{j in J_i} values_j for each i; with `transpose`, sum_{i : j in J_i} values_i."""
    n = values.size
    total = np.zeros(n)
    for k in _BAND_OFFSETS:  # six fixed offsets, each a vectorised shift
        shift = -k if transpose else k
        if abs(shift) >= n:
            continue
        if shift > 0:
            total[: n - shift] += values[shift:]
        else:
            total[-shift:] += values[: n + shift]
    return total


def broyden_banded(x):
    """Problem 31, n variable, m = n."""
    residual = x * (2.0 + 5.0 * x * x) + 1.0 - _band_sum(x * (1.0 + x))

    def vjp(w):
        return w * (2.0 + 15.0 * x * x) - (1.0 + 2.0 * x) * _band_sum(w, transpose=True)

    return residual, vjp


def linear_full_rank(x, *, m):
    """Problem 32, n variable, m >= n."""
    n = x.size
    residual = np.full(m, -2.0 / m * x.sum() - 1.0)
    residual[:n] += x

    def vjp(w):
        return w[:n] - 2.0 / m * w.sum()

    return residual, vjp


def linear_rank_1(x, *, m):
    """Problem 33, n variable, m >= n."""
    j = np.arange(1, x.size + 1)
    i = np.arange(1, m + 1)
    residual = i * (j @ x) - 1.0

    def vjp(w):
        return (i @ w) * j

    return residual, vjp


def linear_rank_1_zero_columns_rows(x, *, m):
    """Problem 34, n >= 3 variable, m >= n."""
    n = x.size
    j = np.arange(2, n)  # columns 2..n-1 carry weight j; columns 1 and n are zero
    i_less_1 = np.arange(1, m - 1)  # i - 1 for rows i = 2..m-1; rows 1 and m are -1
    s = j @ x[1:-1]
    residual = np.concatenate([[-1.0], i_less_1 * s - 1.0, [-1.0]])

    def vjp(w):
        grad = np.zeros(n)
        grad[1:-1] = (i_less_1 @ w[1:-1]) * j
        return grad

    return residual, vjp


def chebyquad(x, *, m):
    """Problem 35, n variable, m >= n."""
    n = x.size
    y = 2.0 * x - 1.0  # shifted Chebyshev polynomials on [0, 1]: T_i(x) = cos(i arccos y)
    previous, current = np.ones(n), y
    d_previous, d_current = np.zeros(n), np.full(n, 2.0)
    residual = np.empty(m)
    slopes = np.empty((m, n))
    for i in range(1, m + 1):  # recurrence in the degree; vectorised over x
        integral = -1.0 / (i * i - 1.0) if i % 2 == 0 else 0.0
        residual[i - 1] = current.mean() - integral
        slopes[i - 1] = d_current / n
        previous, current, d_previous, d_current = (
            current,
            2.0 * y * current - previous,
            d_current,
            4.0 * current + 2.0 * y * d_current - d_previous,
        )
    return residual, slopes.T.dot
