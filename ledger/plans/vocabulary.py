"""The fixed vocabularies of a plan. Stored values are short and stable; labels are for people."""

from django.db import models


class Direction(models.TextChoices):
    INCREASE = "increase", "Increase"
    DECREASE = "decrease", "Decrease"
    DIFFER = "differ", "Any difference (either direction)"
    EQUIVALENT = "equivalent", "Equivalence (no meaningful difference)"


class TestFamily(models.TextChoices):
    T_INDEPENDENT = "t_independent", "t test, independent groups"
    T_PAIRED = "t_paired", "t test, paired measurements"
    T_ONE_SAMPLE = "t_one_sample", "t test, one sample against a value"
    ANOVA_ONEWAY = "anova_oneway", "One-way ANOVA"
    CHI_SQUARE = "chi_square", "Chi-square test"
    CORRELATION = "correlation", "Correlation"
    LINEAR_REGRESSION = "linear_regression", "Linear regression"
    NONPARAMETRIC = "nonparametric", "Non-parametric (rank-based) test"
    OTHER = "other", "Other (describe it)"


class Sides(models.TextChoices):
    TWO = "two", "Two-sided"
    ONE = "one", "One-sided"


class Multiplicity(models.TextChoices):
    NONE = "none", "No correction"
    BONFERRONI = "bonferroni", "Bonferroni"
    HOLM = "holm", "Holm"
    BH = "bh", "Benjamini–Hochberg (false discovery rate)"


class OutcomeRole(models.TextChoices):
    PRIMARY = "primary", "Primary"
    SECONDARY = "secondary", "Secondary"


class Allocation(models.TextChoices):
    RANDOMISED = "randomised", "Randomised"
    NON_RANDOMISED = "non_randomised", "Assigned without randomisation"
    SINGLE_GROUP = "single_group", "One group only"
    OBSERVATIONAL = "observational", "Observational (no assignment)"


class Blinding(models.TextChoices):
    NONE = "none", "Nobody blinded"
    PARTICIPANTS = "participants", "Participants blinded"
    ASSESSORS = "assessors", "Outcome assessors blinded"
    BOTH = "both", "Participants and assessors blinded"


class PowerDesign(models.TextChoices):
    """Designs for which the statistics engine computes a-priori power, and the effect size each takes."""

    NONE = "", "No computed power (justified in words)"
    T_INDEPENDENT = "t_independent", "Two independent groups (Cohen's d)"
    T_PAIRED = "t_paired", "Paired measurements (Cohen's d of differences)"
    T_ONE_SAMPLE = "t_one_sample", "One sample (Cohen's d)"
    PROPORTIONS = "proportions", "Two proportions (Cohen's h)"
    CORRELATION = "correlation", "Correlation (r)"
    ANOVA_ONEWAY = "anova_oneway", "One-way ANOVA (Cohen's f)"
    CHI_SQUARE = "chi_square", "Chi-square (Cohen's w)"
