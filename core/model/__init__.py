"""Stage 3, models: terms, the least-squares fit, ANOVA, Lenth, diagnostics,
transforms.

May import study/ and derive/. Imported by plan/, search/ and later stages.
"""
