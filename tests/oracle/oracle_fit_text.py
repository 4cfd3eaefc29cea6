"""The ``fit_text`` invariant: what ``tradeoff fit`` prints about each effect's margin
and the power transform agrees with the numbers ``fit --json`` gives, recomputed here.

- each effect margin printed beside a term is t(1 - alpha/2, residual df) times the
  effect's standard error (the coefficient's, scaled as the effect is: Student's t,
  as any textbook writes it), and a term said to stand out alone is larger than it;
  with runs sharing batches (each term on its own df) a term stands out alone
  exactly when its p-value is below 1 - confidence;
- the scale sentence names the best power and the interval of the printed
  ``box_cox`` to the digits shown, and says a power transform would not help
  exactly when the power of the scale in use lies inside that interval (Box & Cox
  1964: powers 1, 0.5 and 0 are no change, square root and log; common practice).
"""
from __future__ import annotations

import re

import numpy as np
from scipy import stats

__all__ = ["check_fit_text"]

_POWER = {"none": 1.0, "sqrt": 0.5, "log": 0.0}


def _blocks(text: str, names) -> dict:
    """Response name -> the lines of its block in the printed text."""
    out, current = {}, None
    for line in text.splitlines():
        head = line.split(":", 1)[0]
        if not line.startswith(" ") and head in names:
            current = head
            out[current] = []
        elif current is not None:
            out[current].append(line)
    return out


def check_fit_text(printed: dict, text: str, outcome) -> None:
    def fail(message):
        outcome.fail("fit_text", "fit", message)

    reps = printed["responses"]
    blocks = _blocks(text, set(reps))
    for name, rep in reps.items():
        if rep.get("model") in ("smooth", "category") or name not in blocks:
            continue
        lines = blocks[name]
        level = rep.get("confidence") or 0.95
        df = rep.get("residual_df") or 0
        rows = {}
        for term in rep["terms"]:  # a term's row: its label, then the numbers
            for line in lines:
                if line.startswith(f"  {term} ") and line[2 + len(term):][:1].isspace():
                    rows[term] = line[2 + len(term):]
                    break
        for term, rest in rows.items():
            m = re.search(r"\s\+-(\S+)(?:  (stands out (?:alone|among all terms)))?$", rest)
            if df <= 0:
                continue
            coef, effect = rep["coefficients"].get(term), rep["effects"].get(term)
            se = (rep.get("std_errors") or {}).get(term)
            if m is None:
                if None not in (coef, effect, se) and coef != 0:
                    fail(f"'{name}': no margin printed for '{term}'")
                continue
            margin, verdict = float(m.group(1)), m.group(2)
            if None in (coef, effect, se) or coef == 0:
                fail(f"'{name}': a margin printed for '{term}', which has no effect")
                continue
            if rep.get("whole_plots") is not None:
                # each term on its own (Satterthwaite) df: standing out alone is
                # the same two-sided t test as its p-value
                p = (rep.get("p_values") or {}).get(term)
                alone = verdict is not None
                if p is not None and alone != (p < 1 - level) and abs(p - (1 - level)) > 1e-6:
                    fail(f"'{name}': '{term}' (p {p:.4g}) is "
                         f"{'said' if alone else 'not said'} to stand out alone")
                continue
            want = stats.t.ppf(0.5 + level / 2, df) * se * abs(effect / coef)
            if not np.isclose(margin, float(f"{want:.3g}"), rtol=1e-9, atol=0):
                fail(f"'{name}': margin of '{term}' printed {margin:g}, t x se gives "
                     f"{want:.3g}")
            if (verdict is not None) != (abs(effect) > want):
                fail(f"'{name}': '{term}' (effect {effect:.4g}, margin {want:.4g}) is "
                     f"{'said' if verdict else 'not said'} to stand out")
        bc = rep.get("box_cox")
        said = [line for line in lines if line.startswith("  scale: ")]
        if bc is None:
            if said:
                fail(f"'{name}': a scale sentence with no power check in the JSON")
            continue
        if len(said) != 1:
            fail(f"'{name}': {len(said)} scale sentences printed, one expected")
            continue
        sentence = said[0]
        best = re.search(r"the best power is (-?\d+\.\d+)", sentence)
        if not best or abs(float(best.group(1)) - bc["lambda"]) > 0.005 + 1e-9:
            fail(f"'{name}': scale sentence {sentence!r} does not give the best power "
                 f"{bc['lambda']:.2f}")
        for end in ("low", "high"):
            if bc[end] in (-3.0, 3.0):
                continue  # the end of the powers tried: not printed as a number
            shown = re.findall(r"-?\d+\.\d+", sentence.split("any power", 1)[-1])
            if not any(abs(float(v) - bc[end]) <= 0.05 + 1e-9 for v in shown):
                fail(f"'{name}': scale sentence {sentence!r} misses the interval end "
                     f"{bc[end]:.2f}")
        inside = bc["low"] <= _POWER[rep["transform"]] <= bc["high"]
        if inside != (" would not help" in sentence or " suits this response" in sentence):
            fail(f"'{name}': scale sentence {sentence!r}, but the power in use "
                 f"{_POWER[rep['transform']]} is {'inside' if inside else 'outside'} "
                 f"{bc['low']:.3g} .. {bc['high']:.3g}")
