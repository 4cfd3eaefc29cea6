"""The page's blend triangle: for a study with components, the limits map and the
lines of equal overall desirability D over three components, the rest held at
the recommendation.

Computed by ``ternary`` and drawn by ``ternary_pictures``, rendered to inline
SVG (no browser, no network).
"""
from __future__ import annotations

import pandas as pd

from .charts import _chart_div, _svg
from .sections import _Sections, esc

__all__ = ["_TernarySections"]


class _TernarySections(_Sections):
    """Renders the blend triangle section (studies with three or more components)."""

    def has_triangle(self) -> bool:
        from ..study.mixture import components_of

        return len(components_of(self.study)) >= 3

    def ternary(self) -> str:
        from ..errors import StudyError

        try:
            return self._ternary()
        except StudyError as exc:  # a triangle that cannot be drawn must not stop the page
            return f"<p>No blend triangle: {esc(str(exc))}.</p>"

    def _ternary(self) -> str:
        from ..model.study_fit import StudyFit
        from ..study.mixture import components_of, process_factors_of
        from ..maps.ternary import (ternary_limits, ternary_lines, ternary_position,
                                    three_with_room)
        from ..maps.ternary_pictures import (ternary_axes, ternary_contour_picture,
                                       ternary_limits_picture)

        fit = StudyFit(study=self.study, models=dict(self.data["fitted"]),
                       skipped=dict(self.data["skipped"]))
        if not fit.models:
            return "<p>No blend triangle: no response has a model.</p>"
        comps = components_of(self.study)
        three = [c.name for c in comps[:3]]
        best = self.res["best"] if self.res is not None else None
        if best is not None:
            settings = best["settings"]
            reference = {c.name: float(settings[c.name]) for c in comps}
            three = three_with_room(self.study, reference)
            process = {f.name: settings[f.name] for f in process_factors_of(self.study)}
            marks = ternary_position(self.study, [reference], three, reference=reference
                                     ).assign(what=f"{best['label']} (recommended)")
            marks = marks[["what", "x", "y"]]
            where = f"the other settings at {esc(best['label'])}"
        else:
            reference = process = None
            marks = pd.DataFrame(columns=["what", "x", "y"])
            where = "the other settings at the middle of their ranges"
        has_d = any(r.goal.active and r.name in fit.models for r in self.study.responses)
        tlim = ternary_limits(self.study, three, reference=reference, settings=process,
                              fit=fit)
        d_lines = (ternary_lines(self.study, "D", three, reference=reference,
                                 settings=process, fit=fit) if has_d else None)
        axes = ternary_axes(tlim.lines.attrs,
                            {c.name: c.label for c in comps}, {c.name: c.unit for c in comps})
        titles = {r.name: r.display() for r in self.study.responses}
        labels = {r.name: (r.label, r.unit) for r in self.study.responses}
        charts = [_chart_div(_svg(ternary_limits_picture(tlim, axes, titles, marks,
                                                         d_lines=d_lines, labels=labels,
                                                         width=420)))]
        if has_d:
            # the wash on a coarser grid than the lines: a fifth of the page's bytes
            from ..maps.mixture_tables import ternary_grid
            from ..maps.ternary import ternary_points

            grid = ternary_points(ternary_grid(self.study, fit, three, reference=reference,
                                               settings=process, steps=40, zoom=True))
            grid = grid[grid["response"] == grid["response"].iloc[0]].assign(
                value=lambda t: t["D"])
            charts.append(_chart_div(_svg(ternary_contour_picture(
                grid, d_lines, axes, tlim.bounds, "value", "overall desirability D", marks,
                width=420))))
        names = ", ".join(esc(c.display()) for c in comps if c.name in three)
        held = [c for c in comps if c.name not in three]
        held_text = ("" if not held else "; " + ", ".join(
            f"{esc(c.display())} held at {reference[c.name]:.4g}" if reference else
            esc(c.display()) for c in held))
        return (f"<p>The blends of {names}, {where}{held_text}. Each corner is the blend "
                "richest in one component; the scale on each side gives that component's "
                "amount, read along the faint lines parallel to the side opposite its "
                "corner. The black outline surrounds the blends within every component's "
                "bounds; outside it the lines are faint (the model is guessing).</p>"
                '<div class="charts">' + "".join(charts) + "</div>"
                f'<p class="note">Left: each line is one response\'s limit, in its colour '
                "and dash, with short ticks on the side where the limit fails; the thick "
                "dark outline surrounds the allowed blends where every limit holds "
                f"({tlim.share:.0%} of them); faint dotted lines: D. Right: lines of equal "
                "overall desirability D, each labelled with its value.</p>")

    def blend_model(self, response, rep: dict) -> str:
        """A blend's response read along Cox directions: each component's and process
        factor's effect with its interval, and the fitted equation in amounts."""
        from ..maps.blend_pictures import blend_effects_picture
        from ..maps.mixture_tables import blend_effects, reference_blend
        from ..model.equation import amount_equation
        from ..model.study_fit import StudyFit
        from ..study.mixture import components_of, process_factors_of
        from .data import _g
        from .sections import _table

        comps = components_of(self.study)
        fit = StudyFit(study=self.study, models=dict(self.data["fitted"]),
                       skipped=dict(self.data["skipped"]))
        table = blend_effects(self.study, fit, response.name)
        title = (f"Change in {response.label} ({response.unit})" if response.unit
                 else f"Change in {response.label}")
        ref = reference_blend(self.study)
        ref_text = ", ".join(f"{c.label} {_g(ref[c.name])}" + (f" {c.unit}" if c.unit else "")
                             for c in comps)
        held = "; ".join(f"{f.label} at " + (f.levels[0] if f.is_categorical else
                                             f"{_g(f.centre)} {f.unit}".strip())
                         for f in process_factors_of(self.study))
        out = [f"<p><b>What each part of the recipe does</b> (a blend's coefficients are not "
               "effects: each component is read along its Cox direction, from the least to "
               "the most of it the bounds allow while the others keep their ratios, through "
               f"the centre of the allowed blends: {esc(ref_text)}"
               + (f"; {esc(held)}" if held else "") + f". Dots: the change in the predicted "
               f"mean; bars: its {self.pct} interval.)</p>",
               _chart_div(_svg(blend_effects_picture(
                   table[["what", "effect", "ci_low", "ci_high"]], title, width=420)))]
        proportions = rep.get("proportion_coefficients")
        if proportions:
            eq = amount_equation(proportions, [c.name for c in comps], comps[0].total)
            rows = [[esc(k), _g(v)] for k, v in eq.items() if v != 0.0]
            unit = comps[0].unit or "study units"
            out.append(f"<p><b>The equation in amounts</b> (each component in {esc(unit)}, "
                       f"adding up to {_g(comps[0].total)}; process factors coded -1 at low, "
                       "+1 at high, a level by its level columns)</p>"
                       + _table(["term", "coefficient"], rows, numeric={1}))
        return "".join(out)
