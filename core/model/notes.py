"""Warnings a fit attaches to its terms: nearly aliased terms; which terms are effects."""
from __future__ import annotations


import numpy as np


__all__ = ["NEAR_ALIAS_VIF", "near_alias_notes", "alias_notes", "effect_index",
           "effect_scale"]


# Variance inflation above this marks a term as nearly aliased (a VIF above 10
# is the usual sign of serious collinearity; Montgomery, Design and Analysis of
# Experiments, "common practice").
NEAR_ALIAS_VIF = 10.0


def near_alias_notes(terms, M: np.ndarray, cdiag: np.ndarray,
                      R: np.ndarray | None = None) -> list[str]:
    """A warning per term whose variance inflation factor is above NEAR_ALIAS_VIF.

    VIF_j = diag((X'X)^-1)_j * sum((x_j - mean x_j)^2), the usual centred VIF
    when the model has an intercept; 1 for every term of an orthogonal design.
    Exactly aliased terms were already left out, so this flags runs whose
    settings nearly tie two terms together (a factor that hardly changes apart
    from another), where coefficients become large and unstable.
    """
    if not any(t.is_intercept for t in terms):
        return []
    notes = []
    if R is not None and terms[0].is_intercept:
        # M = QR with the column of ones first: R[0, j]^2 = n mean_j^2, so the
        # rest of column j of R holds its centred sum of squares (no n x p pass).
        centred = np.einsum("ij,ij->j", R[1:], R[1:])
    else:
        centred = np.sum((M - M.mean(axis=0)) ** 2, axis=0)
    for t, c, ss in zip(terms, cdiag, centred):
        if t.is_intercept or ss == 0:
            continue
        vif = float(c * ss)
        if vif > NEAR_ALIAS_VIF:
            notes.append(f"term '{t.label}' is nearly aliased with other terms in these "
                         f"runs (variance inflation {vif:.3g}, above {NEAR_ALIAS_VIF:g}): "
                         "its coefficient is poorly determined: check the factor "
                         "settings, or add runs that set the factors apart")
    return notes


def effect_index(terms) -> list[int]:
    """Positions of the factor effects: no intercept, square, block term, nor a
    level column of a factor with three or more levels (a deviation from the
    average over levels, not a low-to-high change)."""
    return [i for i, t in enumerate(terms)
            if not (t.is_intercept or t.is_square or t.is_block or t.cells)]


def effect_scale(term) -> float:
    """The effect column of a term, in coefficients.

    2 for a term of numeric or two-level factors: the change from the low to
    the high setting (twice the coefficient in -1/+1 coding; common practice),
    and for a term crossing those with a level (``sugar:flour[oat]``: how much
    sugar's low-to-high effect with oat differs from its average over the
    flours). 1 for a column made of levels only (``flour[oat]``,
    ``flour[oat]:film[pe]``): the level's deviation from the average over the
    levels, its coefficient.
    """
    return 1.0 if term.cells and len(term.cells) == len(term.factors) else 2.0


def alias_notes(aliases: dict, block_labels: set) -> tuple[list[str], dict]:
    """One warning per column dropped as aliased, and the ones confounded with blocks.

    ``aliases``: dropped label -> {kept label: coefficient}
    (``tradeoff.model.dependence.find_aliases``). Returns (warnings,
    {dropped label: [partner labels]} for those confounded with the blocks).
    """
    from .dependence import combination_text

    warnings, confounded = [], {}
    for dropped, partners in aliases.items():
        if any(q in block_labels for q in partners):
            confounded[dropped] = list(partners)
            warnings.append(f"term '{dropped}' is confounded with the blocks "
                            f"({dropped} = {combination_text(partners)} in these "
                            "runs): a shift between blocks cannot be told apart from "
                            "it, so it is left out of the model")
        elif not partners:
            warnings.append(f"term '{dropped}' is 0 in every run and cannot be "
                            "estimated: left out")
        elif list(partners) == ["intercept"]:
            warnings.append(f"term '{dropped}' does not vary in these runs (it is "
                            "aliased with the intercept): left out")
        else:
            first = next(iter(partners))
            warnings.append(f"term '{dropped}' cannot be told apart from "
                            f"{combination_text(partners)} in these runs (aliased): "
                            f"only {first if len(partners) == 1 else 'those'} "
                            "estimated, standing for both")
    return warnings, confounded
