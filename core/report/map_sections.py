"""The page's maps: the limits map and D's contour lines around the recommendation,
a trace chart per response through it, and the model's interaction charts.

Everything is drawn from the tidy tables of ``contours`` and ``slices`` by the
drawings of ``pictures``, rendered to inline SVG (no browser, no network).
Only what the page shows is computed: one pair of maps over the first two
numeric factors, one trace chart per response (and D), and for each response its
largest clear interaction.
"""
from __future__ import annotations

import pandas as pd

from .charts import _chart_div, _svg
from .data import _get, _is_clear
from .sections import _Sections, esc

__all__ = ["_MapSections"]


class _MapSections(_Sections):
    """Renders the maps, slices and interaction charts."""

    def _study_fit(self):
        from ..model.study_fit import StudyFit

        return StudyFit(study=self.study, models=dict(self.data["fitted"]),
                        skipped=dict(self.data["skipped"]))

    def maps(self) -> str:
        if self.res is None:
            return "<p>No maps: there is no recommendation to draw them around.</p>"
        from ..maps.contours import contour_lines, limits_map
        from ..maps.pictures import contour_picture, limits_note, limits_picture

        best = self.res["best"]
        settings = best["settings"]
        # a blend's components are mapped in the triangle (ternary_sections): two of
        # them over a square would hold the others off the total
        numeric = [f for f in self.study.factors
                   if not f.is_categorical and not getattr(f, "is_component", False)]
        out = []
        if len(numeric) >= 2:
            fx, fy = numeric[0], numeric[1]
            held = {k: v for k, v in settings.items() if k not in (fx.name, fy.name)}
            fit = self._study_fit()
            lmap = limits_map(self.study, fx.name, fy.name, fixed=held, fit=fit)
            d_lines = contour_lines(self.study, "D", fx.name, fy.name, fixed=held, fit=fit)
            marks = pd.DataFrame({"what": [f"{best['label']} (recommended)"],
                                  "x": [settings[fx.name]], "y": [settings[fy.name]]})
            titles = {r.name: r.display() for r in self.study.responses}
            labels = {r.name: (r.label, r.unit) for r in self.study.responses}
            held_text = ", ".join(f"{esc(k)} = {esc(self._setting(k, v))}"
                                  for k, v in held.items())
            out.append(f"<p>Over {esc(fx.display())} and {esc(fy.display())}, the other "
                       f"factors held at the recommendation ({held_text}).</p>")
            out.append('<div class="charts">')
            out.append(_chart_div(_svg(limits_picture(
                lmap, titles, fx.display(), fy.display(), marks, d_lines=d_lines,
                labels=labels, height=360, width=430))))
            out.append(_chart_div(_svg(contour_picture(
                lmap.grid, d_lines, "D", "overall desirability D", fx.display(),
                fy.display(), marks, height=360, width=430))))
            out.append("</div>")
            out.append(f'<p class="note">Left: {esc(limits_note(lmap))} Right: lines of '
                       "equal overall desirability D, each labelled with its value.</p>")
        else:
            out.append("<p>Maps need two numeric factors"
                       + (" besides the blend's components (mapped in the blend "
                          "triangle)" if any(getattr(f, "is_component", False)
                                              for f in self.study.factors) else "")
                       + ".</p>")
        out.append(self._slices(settings, best["label"]))
        return "".join(out)

    def _slices(self, settings: dict, label: str) -> str:
        from ..maps.slices import slices
        from ..maps.trace_picture import trace_note, traces_picture

        table = slices(self.study, settings, fit=self._study_fit(), n=31)
        if table.empty:
            return ""
        titles = {r.name: r.display() for r in self.study.responses
                  if r.name in self.data["fitted"]}
        if (table["response"] == "D").any():
            titles["D"] = "Overall desirability D"
        chart = traces_picture(table, titles, {f.name: f.label for f in self.study.factors},
                               columns=3, width=230, height=150)
        if chart is None:
            return ""
        return (f"<h3>How each response follows each factor, through {esc(label)}</h3>"
                f"<p class='note'>{esc(trace_note(self.study, label))}</p>"
                + _chart_div(_svg(chart)))

    def interaction_chart(self, name: str, rep: dict, alpha: float) -> str:
        """The model's chart of a response's largest clear two-factor interaction."""
        from ..maps.tables import interaction_means
        from ..maps.pictures import interaction_picture
        from ..maps.slices import model_interaction

        pairs = []
        # a blend component has no low and high ends of its own (the blend adds up)
        process = {f.name for f in self.study.factors if not getattr(f, "is_component", False)}
        for term in rep["terms"]:
            # a level column names its factor before the bracket: wool:tension[L]
            parts = [part.split("[")[0] for part in term.split(":")]
            if (len(parts) != 2 or not set(parts) <= process
                    or not _is_clear(rep, term, alpha)):
                continue
            effect = _get(rep["effects"], term)
            if effect is not None:
                pairs.append((abs(effect), parts))
        if not pairs:
            return ""
        a, b = max(pairs)[1]
        fa, fb = self.study.factor(a), self.study.factor(b)
        # the factor with more levels along the axis, one line per level of the other
        if _count(fb) > _count(fa):
            a, b = b, a
        fa, fb = self.study.factor(a), self.study.factor(b)
        r = self.study.response(name)
        model = model_interaction(self.study, name, a, b, fit=self._study_fit())
        cells = interaction_means(self.study, name, a, b)
        y_title = r.display()
        chart = interaction_picture(cells, model, fa.display(), fb.display(), y_title,
                                    height=200, width=260)
        levels = ("; a factor of three or more levels averaged over its levels"
                  if any(_count(f) > 2 for f in self.study.factors if f.name not in (a, b))
                  else "")
        return (f"<p><b>Largest clear interaction: {esc(a)} with {esc(b)}</b> (lines: the "
                f"model, one per {'level' if fb.is_categorical else 'end'} of {esc(b)}, "
                f"others at their centre{levels}, with {self.pct} intervals of the mean; "
                "open circles: measured means)</p>" + _chart_div(_svg(chart)))


def _count(factor) -> int:
    """How many points an interaction chart reads a factor at: its levels, or its two ends."""
    return len(factor.levels) if factor.is_categorical else 2
