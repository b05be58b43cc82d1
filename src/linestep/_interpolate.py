"""Safeguarded one-dimensional interpolation: pure functions of scalars, no state.

Every search that interpolates calls these; none carries its own formulas.
Each minimiser returns None when the model has no usable minimiser (a
non-finite or degenerate result), and the caller then bisects or shrinks.

References
----------
J. Nocedal and S. J. Wright, *Numerical Optimization*, 2nd ed., Springer, 2006,
§3.5 (eqs. 3.57–3.59).
J. J. Moré and D. J. Thuente, "Line search algorithms with guaranteed sufficient
decrease", ACM TOMS 20(3):286–307, 1994, §4.
"""

from __future__ import annotations

import math


def quadratic_from_slope(a: float, fa: float, da: float, b: float, fb: float) -> float | None:
    """Minimiser of the quadratic with q(a)=fa, q'(a)=da, q(b)=fb (N&W eq. 3.57 when a=0)."""
    h = b - a
    if h == 0.0:
        return None
    curvature = fb - fa - da * h  # = c·h² with q(t) = fa + da·(t−a) + c·(t−a)²
    if not curvature > 0.0:
        return None
    t = a - da * h * h / (2.0 * curvature)
    return t if math.isfinite(t) else None


def quadratic_from_slopes(a: float, da: float, b: float, db: float) -> float | None:
    """Secant step: the zero of the linear interpolant of φ' through (a, da), (b, db)."""
    if da == db or a == b:
        return None
    t = b - db * (b - a) / (db - da)
    return t if math.isfinite(t) else None


def cubic_from_slopes(a: float, fa: float, da: float, b: float, fb: float,
                      db: float) -> float | None:
    """Minimiser of the cubic matching φ and φ' at a and b (N&W eq. 3.59).

    Written in the scaled form of Moré–Thuente §4 so that large slopes do not
    overflow the discriminant.
    """
    if a == b:
        return None
    theta = 3.0 * (fa - fb) / (b - a) + da + db
    scale = max(abs(theta), abs(da), abs(db))
    if scale == 0.0 or not math.isfinite(scale):
        return None
    discriminant = (theta / scale) ** 2 - (da / scale) * (db / scale)
    if discriminant < 0.0:
        return None
    gamma = scale * math.sqrt(discriminant)
    if b < a:
        gamma = -gamma
    # Minimiser t = a + r·(b − a), with r = (γ − da + θ)/(2γ − da + db) (Moré–Thuente).
    denominator = (gamma - da) + (gamma + db)
    if denominator == 0.0:
        return None
    t = a + (gamma - da + theta) / denominator * (b - a)
    return t if math.isfinite(t) else None


def cubic_backtrack(f0: float, d0: float, a: float, fa: float, b: float,
                    fb: float) -> float | None:
    """Minimiser of the cubic through φ(0), φ'(0), φ(a), φ(b) (N&W eq. 3.58).

    Used by backtracking once two trial steps a (older) and b (newer) failed.
    """
    if a == b or a == 0.0 or b == 0.0:
        return None
    ra = fa - f0 - d0 * a
    rb = fb - f0 - d0 * b
    denominator = a * a * b * b * (b - a)
    if denominator == 0.0 or not math.isfinite(denominator):
        return None  # a²b² under- or overflowed: no usable cubic, the caller bisects
    c3 = (a * a * rb - b * b * ra) / denominator
    c2 = (-a * a * a * rb + b * b * b * ra) / denominator
    if c3 == 0.0:
        if c2 <= 0.0:
            return None
        t = -d0 / (2.0 * c2)
    else:
        discriminant = c2 * c2 - 3.0 * c3 * d0
        if discriminant < 0.0:
            return None
        # (−c2 + √disc)/(3c3) rewritten to avoid cancellation when c2 > 0.
        root = math.sqrt(discriminant)
        t = -d0 / (c2 + root) if c2 > 0.0 else (root - c2) / (3.0 * c3)
    return t if math.isfinite(t) and t > 0.0 else None


def clip(t: float | None, low: float, high: float) -> float:
    """`t` moved into [low, high]; the midpoint when `t` is None or not finite."""
    if t is None or not math.isfinite(t):
        return 0.5 * (low + high)
    if t < low:
        return low
    if t > high:
        return high
    return t


def cubic_beyond(a: float, fa: float, da: float, b: float, fb: float,
                 db: float) -> float | None:
    """Minimiser of the cubic matching φ and φ' at a and b, when it lies beyond b.

    "Beyond b" is the side of b away from a. Returns None unless the cubic
    rises to +∞ in that direction and its local minimiser is there: the
    extrapolation step of Moré–Thuente 1994 §4, case 3. With s = (t − a)/(b − a)
    the cubic's s³ coefficient is (b − a)·(da + db) − 2·(fb − fa), which must be
    positive.
    """
    h = b - a
    if h == 0.0:
        return None
    if not h * (da + db) - 2.0 * (fb - fa) > 0.0:
        return None
    t = cubic_from_slopes(a, fa, da, b, fb, db)
    if t is None or not (t - b) * h > 0.0:
        return None
    return t
