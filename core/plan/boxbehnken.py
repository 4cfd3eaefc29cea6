"""Box-Behnken designs for 3 to 7 numeric factors.

Box & Behnken (1960), "Some new three level designs for the study of
quantitative variables", Technometrics 2(4), build each design from a
balanced incomplete block arrangement: every group of factors below runs a
two-level factorial (-1/+1) while the other factors stay at their centre,
and centre runs are added. No run sits at a corner of the box; every factor
takes three settings. The groups below are the published ones (from memory;
the 3-factor design is also tabulated in the NIST/SEMATECH e-Handbook of
Statistical Methods, section 5.3.3.6.2); tests/plan check the properties the
paper states for them: run counts, each pair of factors meeting equally
often, rotatability for 4 and 7 factors, and blocks orthogonal to the model.

Blocks (Box & Behnken 1960): 4 factors in 3 blocks (the three pairs of
disjoint pairs), 5 factors in 2 blocks (each factor twice in each), 6 and 7
factors in 2 blocks (each group's factorial split by the sign of the
product of its factors). Centre runs go into every block.
"""
from __future__ import annotations

from itertools import product

import numpy as np

from ..errors import PlanError

__all__ = ["BOX_BEHNKEN_GROUPS", "BOX_BEHNKEN_BLOCKS", "box_behnken_points"]

# factors k -> groups of factors (0-based) that run a two-level factorial together
BOX_BEHNKEN_GROUPS: dict[int, tuple[tuple[int, ...], ...]] = {
    3: ((0, 1), (0, 2), (1, 2)),
    4: ((0, 1), (2, 3), (0, 3), (1, 2), (0, 2), (1, 3)),
    5: ((0, 1), (2, 3), (1, 4), (0, 2), (3, 4), (0, 3), (1, 2), (2, 4), (0, 4), (1, 3)),
    6: ((0, 1, 3), (1, 2, 4), (2, 3, 5), (0, 3, 4), (1, 4, 5), (0, 2, 5)),
    7: ((3, 4, 5), (0, 5, 6), (1, 4, 6), (0, 1, 3), (2, 3, 6), (0, 2, 4), (1, 2, 5)),
}

# factors k -> number of blocks it can be split into ("group" blocks: groups
# i*g..(i+1)*g-1 form block i; "sign": each group split by the product's sign)
BOX_BEHNKEN_BLOCKS: dict[int, tuple[int, str]] = {
    4: (3, "group"), 5: (2, "group"), 6: (2, "sign"), 7: (2, "sign"),
}


def box_behnken_points(k: int, *, center: int | None = None, blocks: int = 1
                       ) -> tuple[np.ndarray, list[str], np.ndarray]:
    """The coded runs of the Box-Behnken design for k numeric factors.

    Parameters
    ----------
    k : 3 to 7 numeric factors.
    center : centre runs in all for one block (default 3), in each block when
        blocked (default 1 each).
    blocks : 1, or the published number of blocks (see BOX_BEHNKEN_BLOCKS).

    Returns
    -------
    coded : (N, k) runs (edge runs, then centre runs, block by block).
    point : ``edge`` or ``centre`` for each run.
    block : (N,) block numbers from 1.
    """
    if k < 3 or k > 7:
        raise PlanError(f"a Box-Behnken design needs 3 to 7 numeric factors, and this "
                        f"study has {k}: use --design central-composite or optimal"
                        + (" (with fewer than 3 factors a central composite is the "
                           "usual choice)" if k < 3 else ""))
    groups = BOX_BEHNKEN_GROUPS[k]
    if blocks != 1:
        allowed = BOX_BEHNKEN_BLOCKS.get(k)
        if allowed is None or blocks != allowed[0]:
            options = "1" + (f" or {allowed[0]}" if allowed else "")
            raise PlanError(f"the Box-Behnken design for {k} factors is run in "
                            f"{options} block(s) as published, not {blocks}")
    if center is None:
        center = 3 if blocks == 1 else 1
    if not isinstance(center, (int, np.integer)) or center < 0:
        raise PlanError(f"--center must be a whole number, 0 or more, found {center}")
    rows, block = [], []
    per = len(groups) // blocks if blocks > 1 else len(groups)
    mode = BOX_BEHNKEN_BLOCKS.get(k, (1, "group"))[1]
    for g_index, group in enumerate(groups):
        for signs in product((-1.0, 1.0), repeat=len(group)):
            row = np.zeros(k)
            row[list(group)] = signs
            rows.append(row)
            if blocks == 1:
                block.append(1)
            elif mode == "group":
                block.append(g_index // per + 1)
            else:
                block.append(1 if np.prod(signs) > 0 else 2)
    coded = np.array(rows)
    block = np.array(block)
    order = np.argsort(block, kind="stable")
    coded, block = coded[order], block[order]
    parts, blocks_out, point = [], [], []
    for b in range(1, blocks + 1):
        members = coded[block == b]
        parts += [members, np.zeros((center, k))]
        blocks_out += [b] * (len(members) + center)
        point += ["edge"] * len(members) + ["centre"] * center
    return np.vstack(parts), point, np.array(blocks_out)
