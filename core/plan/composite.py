"""Central composite designs laid out before any run is made.

A central composite design has three parts (Box & Wilson 1951; common
practice): a two-level factorial (or a fraction of resolution V or more, so
every two-factor interaction is clear) at coded -1/+1, 2k axial runs at
+-alpha on each factor's axis with the others at their centre, and centre
runs. The axial distance alpha:

- ``face``: 1, the axial runs on the faces of the box (three settings per factor);
- ``rotatable``: F^(1/4) with F factorial runs, so the prediction variance
  depends only on the distance from the centre (Box & Hunter 1957);
- ``orthogonal``: without blocks, the alpha that leaves the estimates of the
  square terms uncorrelated, [F (sqrt(N) - sqrt(F))^2 / 4]^(1/4) with N runs
  in all (Myers, Montgomery & Anderson-Cook, Response Surface Methodology);
  in two blocks, the alpha that makes the blocks orthogonal to the model,
  sqrt(F (2k + c_a) / (2 (F + c_f))) with c_f and c_a centre runs in the
  factorial and axial blocks (Montgomery, Design and Analysis of Experiments,
  response surface designs in blocks; from memory; tests/plan check both
  properties directly);
- a number: that distance.

Categorical factors are crossed with the whole design: it is repeated at
every combination of their levels (common practice).
"""
from __future__ import annotations

import math

import numpy as np

from ..errors import PlanError

__all__ = ["ALPHA_NAMES", "axial_alpha", "composite_points"]

ALPHA_NAMES = ("face", "rotatable", "orthogonal")


def axial_alpha(alpha, k: int, n_factorial: int, *, center_factorial: int,
                center_axial: int, blocks: int = 1) -> float:
    """The axial distance in coded units for ``alpha`` (a name or a number).

    ``center_factorial`` and ``center_axial`` are the centre runs in the
    factorial and the axial block (for one block, their sum is what counts).
    """
    if isinstance(alpha, str):
        text = alpha.strip().lower()
        if text == "face":
            return 1.0
        if text == "rotatable":
            return float(n_factorial) ** 0.25
        if text == "orthogonal":
            F = float(n_factorial)
            if blocks == 2:
                return math.sqrt(F * (2 * k + center_axial) / (2 * (F + center_factorial)))
            N = F + 2 * k + center_factorial + center_axial
            return (F * (math.sqrt(N) - math.sqrt(F)) ** 2 / 4.0) ** 0.25
        try:
            value = float(text)
        except ValueError:
            value = None
        if value is None:
            raise PlanError(f"--alpha '{alpha}' is not a distance I know: use face, "
                            "rotatable, orthogonal or a positive number such as 1.5")
        alpha = value
    if isinstance(alpha, bool) or not isinstance(alpha, (int, float)) \
            or not math.isfinite(alpha) or alpha <= 0:
        raise PlanError(f"--alpha {alpha} is not a positive number: use face, rotatable, "
                        "orthogonal or a distance above 0 such as 1.5")
    return float(alpha)


def composite_points(factorial: np.ndarray, *, alpha="rotatable", center: int | None = None,
                     blocks: int = 1) -> tuple[np.ndarray, list[str], np.ndarray, float]:
    """The coded runs of a central composite design on k numeric factors.

    Parameters
    ----------
    factorial : (F, k) the two-level part, -1/+1.
    alpha : ``face``, ``rotatable``, ``orthogonal`` or a positive number.
    center : centre runs: in all for one block (default 4), in each block
        for two (default 2 each).
    blocks : 1 (one block) or 2 (the factorial runs, then the axial runs).

    Returns
    -------
    coded : (N, k) runs: factorial, axial, centre (block by block).
    point : the kind of each run: ``factorial``, ``axial`` or ``centre``.
    block : (N,) block numbers 1 or 1, 2.
    alpha : the axial distance used.
    """
    F, k = factorial.shape
    if blocks not in (1, 2):
        raise PlanError(f"a central composite design is run in 1 block or in 2 (the "
                        f"factorial runs, then the axial runs), not {blocks}")
    if center is None:
        center = 4 if blocks == 1 else 2
    if not isinstance(center, (int, np.integer)) or center < 0:
        raise PlanError(f"--center must be a whole number, 0 or more, found {center}")
    cf, ca = (center, center) if blocks == 2 else (center, 0)
    a = axial_alpha(alpha, k, F, center_factorial=cf, center_axial=ca, blocks=blocks)
    axial = np.zeros((2 * k, k))
    for j in range(k):
        axial[2 * j, j], axial[2 * j + 1, j] = -a, a
    if blocks == 1:
        coded = np.vstack([factorial, axial, np.zeros((center, k))])
        point = ["factorial"] * F + ["axial"] * (2 * k) + ["centre"] * center
        block = np.ones(len(coded), dtype=int)
    else:
        coded = np.vstack([factorial, np.zeros((cf, k)), axial, np.zeros((ca, k))])
        point = (["factorial"] * F + ["centre"] * cf + ["axial"] * (2 * k)
                 + ["centre"] * ca)
        block = np.array([1] * (F + cf) + [2] * (2 * k + ca))
    return coded, point, block, a
