"""Advice on step sizes: estimate the smoothness, diagnose a history, recommend a controller.

The public names are re-exported from `linestep`: `estimate_smoothness` and
`Smoothness`, `diagnose` and `Diagnosis`, `advise` and `Advice`. The rule that
picks a set-up from a study's results (robustness first, then cost) is defined
once, in `linestep.bench._rule`, and re-exported here: `standings` and
`recommendation_sentences` (the HTML report of every study uses them too).
"""

from linestep.advice._advise import Advice, advise
from linestep.advice._diagnose import Diagnosis, diagnose
from linestep.advice._smoothness import Smoothness, estimate_smoothness
from linestep.bench._rule import Standing, recommendation_sentences, standings

__all__ = ["Advice", "Diagnosis", "Smoothness", "Standing", "advise", "diagnose",
           "estimate_smoothness", "recommendation_sentences", "standings"]
