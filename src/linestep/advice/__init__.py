"""Advice on step sizes: estimate the smoothness, diagnose a history, recommend a controller.

The public names are re-exported from `linestep`: `estimate_smoothness` and
`Smoothness`, `diagnose` and `Diagnosis`, `advise` and `Advice`. The rule that
picks a set-up from a study's results (robustness first, then cost) lives here
once: `standings` and `recommendation_sentences` (the HTML report uses them).
"""

from linestep.advice._advise import Advice, advise
from linestep.advice._diagnose import Diagnosis, diagnose
from linestep.advice._rule import Standing, recommendation_sentences, standings
from linestep.advice._smoothness import Smoothness, estimate_smoothness

__all__ = ["Advice", "Diagnosis", "Smoothness", "Standing", "advise", "diagnose",
           "estimate_smoothness", "recommendation_sentences", "standings"]
