"""The interpolation formulas of `linestep._interpolate`, written for `jax.numpy`.

Every compiled search takes its trial steps from here, so the formulas exist
once on each path. Each function mirrors its host twin operation for operation
(same grouping, same safeguards), so that both paths choose the same trials up
to rounding. Where the host returns None ("no usable minimiser"), these return
NaN; callers test with `jnp.isnan`. All branches are computed (there is no
Python control flow on traced values), with safe denominators so that no branch
produces a NaN that the result does not ask for.

References
----------
Those of `linestep._interpolate`: Nocedal & Wright 2006, §3.5 (eqs. 3.57–3.59);
Moré & Thuente 1994, §4.
"""

from __future__ import annotations

from typing import Any

import jax.numpy as jnp

Scalar = Any


def _safe(denominator: Scalar) -> Scalar:
    return jnp.where(denominator == 0, jnp.ones_like(denominator), denominator)


def _finite_or_nan(t: Scalar, valid: Scalar) -> Scalar:
    return jnp.where(valid & jnp.isfinite(t), t, jnp.nan)


def quadratic_from_slope(a: Scalar, fa: Scalar, da: Scalar, b: Scalar, fb: Scalar) -> Scalar:
    """Twin of `linestep._interpolate.quadratic_from_slope` (N&W eq. 3.57 when a = 0)."""
    h = b - a
    curvature = fb - fa - da * h
    valid = (h != 0) & (curvature > 0)
    t = a - da * h * h / (2.0 * jnp.where(valid, curvature, 1.0))
    return _finite_or_nan(t, valid)


def cubic_from_slopes(a: Scalar, fa: Scalar, da: Scalar, b: Scalar, fb: Scalar,
                      db: Scalar) -> Scalar:
    """Twin of `linestep._interpolate.cubic_from_slopes` (N&W eq. 3.59, scaled form)."""
    distinct = a != b
    theta = 3.0 * (fa - fb) / _safe(b - a) + da + db
    scale = jnp.maximum(jnp.maximum(jnp.abs(theta), jnp.abs(da)), jnp.abs(db))
    scaled = (scale != 0) & jnp.isfinite(scale)
    s = jnp.where(scaled, scale, 1.0)
    discriminant = (theta / s) ** 2 - (da / s) * (db / s)
    real = discriminant >= 0
    gamma = s * jnp.sqrt(jnp.where(real, discriminant, 0.0))
    gamma = jnp.where(b < a, -gamma, gamma)
    denominator = (gamma - da) + (gamma + db)
    t = a + (gamma - da + theta) / _safe(denominator) * (b - a)
    return _finite_or_nan(t, distinct & scaled & real & (denominator != 0))


def cubic_backtrack(f0: Scalar, d0: Scalar, a: Scalar, fa: Scalar, b: Scalar,
                    fb: Scalar) -> Scalar:
    """Twin of `linestep._interpolate.cubic_backtrack` (N&W eq. 3.58)."""
    usable = (a != b) & (a != 0) & (b != 0)
    ra = fa - f0 - d0 * a
    rb = fb - f0 - d0 * b
    denominator = _safe(a * a * b * b * (b - a))
    c3 = (a * a * rb - b * b * ra) / denominator
    c2 = (-a * a * a * rb + b * b * b * ra) / denominator
    # c3 = 0: the model is a quadratic.
    t_quadratic = -d0 / (2.0 * jnp.where(c2 > 0, c2, 1.0))
    discriminant = c2 * c2 - 3.0 * c3 * d0
    root = jnp.sqrt(jnp.where(discriminant >= 0, discriminant, 0.0))
    t_cubic = jnp.where(c2 > 0, -d0 / _safe(c2 + root), (root - c2) / (3.0 * _safe(c3)))
    flat = c3 == 0
    t = jnp.where(flat, t_quadratic, t_cubic)
    valid = usable & jnp.where(flat, c2 > 0, discriminant >= 0)
    return _finite_or_nan(t, valid & (t > 0))


def clip(t: Scalar, low: Scalar, high: Scalar) -> Scalar:
    """Twin of `linestep._interpolate.clip`: the midpoint when `t` is NaN or not finite."""
    middle = 0.5 * (low + high)
    return jnp.where(jnp.isfinite(t), jnp.minimum(jnp.maximum(t, low), high), middle)
