"""The recommendation's steadiness as terminal text (``optimize --weights-sensitivity``)."""
from __future__ import annotations

from ..cautions import FOOD_CAUTION

__all__ = ["sensitivity_text"]


def _num(v, base=1.0) -> str:
    """A move, signed; rounding dust of the polish (a millionth of the value) is 0."""
    if isinstance(v, str):
        return v
    return "0" if abs(v) < 1e-6 * max(1.0, abs(base)) else f"{v:+.3g}"


def sensitivity_text(s, *, STILL, MOVES, LIMIT_SHIFT) -> str:
    """Readable text of a ``Sensitivity``: the sentence, binding goals, two tables.

    The thresholds come from ``tradeoff.search.sensitivity`` (passed in, so
    this module does not import it back).
    """
    ch = s.changes
    lines = [f"How steady the recommendation is (each goal's weight halved and doubled, "
             f"each limit moved {LIMIT_SHIFT:.0%} of the goal's span down and up, one "
             "change at a time, the best settings found again after each):",
             f"  {s.sentence}"]
    goals = list(dict.fromkeys(ch["goal"])) if len(ch) else []
    free = [g for g in goals if g not in s.binding]
    if s.binding:
        lines.append("  holding it in place (a change to them moves the settings by more "
                     f"than {STILL} coded units): " + ", ".join(s.binding))
    if free:
        lines.append("  not holding it (their changes leave the settings where they are): "
                     + ", ".join(free))
    factors = [c[6:] for c in ch.columns if c.startswith("shift:")]
    cats = [c[4:] for c in ch.columns if c.startswith("set:") and c[4:] not in factors]
    width = max([len(w) for w in ch["words"]] + [6]) if len(ch) else 6
    head = f"  {'change':<{width}} {'moved':>6} {'D':>6} " + "".join(
        f"{n[:11]:>12}" for n in factors + cats)
    lines += ["", "settings after each change (shift from the recommendation in each "
              "factor's units; moved = distance in coded units):", head]
    for row in ch.to_dict("records"):
        mark = "*" if row["move"] > MOVES or row["levels_changed"] else " "
        cells = [_num(row[f"shift:{n}"], s.baseline["settings"][n]) for n in factors]
        cells += [row[f"set:{n}"] if n in row["levels_changed"].split(", ") else "same"
                  for n in cats]
        D = f"{row['D']:.3f}" if row["feasible"] else "none"
        lines.append(f" {mark}{row['words']:<{width}} {row['move']:>6.3f} {D:>6} "
                     + "".join(f"{c[:11]:>12}" for c in cells))
    responses = [c[5:] for c in ch.columns if c.startswith("pred:")]
    if responses:
        lines += ["", "predictions after each change (shift from the recommendation's, "
                  "in each response's units):",
                  f"  {'change':<{width}} " + "".join(f"{n[:13]:>14}" for n in responses)]
        for row in ch.to_dict("records"):
            lines.append(f"  {row['words']:<{width}} " + "".join(
                f"{_num(row[f'pred:{n}'], s.baseline['predicted'][n]):>14}"
                for n in responses))
    lines += [f"  (* moves by more than {MOVES} coded units or to another level: "
              "another recommendation)",
              "cautions: " + FOOD_CAUTION]
    return "\n".join(lines)
