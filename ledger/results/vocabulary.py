"""Vocabularies of the result form."""

from django.db import models


class StatisticKind(models.TextChoices):
    NONE = "", "none reported"
    T = "t", "t"
    F = "F", "F"
    CHI2 = "chi2", "χ²"
    Z = "z", "z"
    R = "r", "r"


# Which statistics need which degrees of freedom (r takes N analysed instead).
NEEDS_DF1 = frozenset({StatisticKind.T, StatisticKind.F, StatisticKind.CHI2})
NEEDS_DF2 = frozenset({StatisticKind.F})


class EffectKind(models.TextChoices):
    NONE = "", "none reported"
    D = "d", "Cohen's d"
    G = "g", "Hedges' g"
    R = "r", "Correlation r"
    ODDS_RATIO = "or", "Odds ratio"
    LOG_ODDS_RATIO = "log_or", "Log odds ratio"
    RISK_RATIO = "rr", "Risk ratio"
    ETA_SQUARED = "eta2", "η² (eta squared)"
    OTHER = "other", "Other"
