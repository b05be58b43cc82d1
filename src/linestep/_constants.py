"""Policy constants shared by several controllers, each defined once.

A constant used by one algorithm only stays in that algorithm's module, named
beside the code it tunes; the ones here are common to several, so that they
cannot drift apart (the compiled JAX twins import them too).
"""

from __future__ import annotations

# After a non-finite trial there is nothing to interpolate: the next trial goes this
# fraction of the way from the last good point (t = 0 when backtracking) towards it.
# Our safeguard, not from a paper; one factor of ten per retry recovers from overflow fast.
NON_FINITE_SHRINK = 0.1

# Bisect a bracket when two trials shrank it by less than this factor (Moré & Thuente
# 1994, §2, δ = 0.66; Hager & Zhang's γ plays the same part and has the same default).
BISECT_UNLESS_SHRUNK = 0.66

# Largest ‖d − c·(−g)‖ / ‖d‖ still read as d = c·(−g), for the rules defined only along
# the negative gradient (Barzilai–Borwein, Polyak): rounding of a negation or scaling.
DIRECTION_RTOL = 1e-6

# When sᵀy ≤ 0 with s ≠ 0 (f not convex along the last step) Barzilai–Borwein has no
# quotient; the previous trial times this factor is tried (the globalising search cuts it
# back when it is too long). Reusing it unchanged kept a fixed step for thousands of
# iterations near saddle points (Wood's function). Our safeguard, not from the papers.
NEGATIVE_CURVATURE_GROWTH = 2.0
