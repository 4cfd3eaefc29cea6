"""The page's trade-off sections: the frontier of the two goals in greatest conflict,
and how steady the recommendation is when weights and limits change.

Numbers from ``report_data``'s ``trade`` block (``frontier_data.py``);
drawings from ``maps.frontier_picture`` and ``maps.steadiness_picture``,
rendered to inline SVG.
"""
from __future__ import annotations

from .charts import _chart_div, _svg
from .data import _g
from .sections import _Sections, _table, esc

__all__ = ["_FrontierSections"]


class _FrontierSections(_Sections):
    """Renders the trade-off frontier and the steadiness sections."""

    def has_trade(self) -> bool:
        return self.data.get("trade") is not None

    def tradeoff(self) -> str:
        from ..maps.frontier_picture import frontier_frame, frontier_note, frontier_picture

        trade = self.data["trade"]
        front = trade["frontier"]
        if front is None:
            return f"<p>No frontier: {esc(trade['frontier_note'])}.</p>"
        pair = trade["pair"]
        a, b = front.between
        n_pairs = len(trade["conflicts"])
        out = [f"<p class='lead'>The two goals pulling hardest against each other are "
               f"<b>{esc(a)}</b> and <b>{esc(b)}</b>, chosen because over the "
               f"{pair['n']} settings of the search's batch ({esc(pair['basis'])}) "
               f"their desirabilities rank against each other most: Spearman rank "
               f"correlation {pair['rho']:.2f}, the most negative of {n_pairs} pairs. "
               f"Below: the settings where {esc(a)} can only gain at {esc(b)}'s cost, "
               "every other goal within its limits.</p>"]
        table = frontier_frame(front, self.study)
        titles = {n: self._item(n).display() for n in front.between}
        chart = frontier_picture(table, front.d_optimum, front.between, titles,
                                 width=460, height=320)
        out.append(_chart_div(_svg(chart)))
        out.append(f"<p class='note'>{esc(frontier_note(front))}</p>")
        o = front.d_optimum
        facts = [f"Settings of greatest D (D = {o['D']:.3f}): {esc(a)} "
                 f"{_g(self._val(o, a))}, {esc(b)} {_g(self._val(o, b))}; nearest frontier "
                 f"point #{o['nearest']}."]
        if front.knee is not None:
            k = front.knee
            facts.append(f"Knee: point #{k['index']} ({esc(a)} {_g(self._val(k, a))}, "
                         f"{esc(b)} {_g(self._val(k, b))}), where the frontier bends most "
                         "(within one piece of it: a jump where one set of levels hands "
                         "over to another is not a bend).")
        words = front.exchange_words(labels={n: self._item(n).label for n in (a, b)})
        if words:
            facts.append("Exchange rate along the frontier: " + "; ".join(
                esc(w) for w in words) + ".")
        out.append("<ul>" + "".join(f"<li>{f}</li>" for f in facts) + "</ul>")
        rows = []
        for r in table.to_dict("records"):
            note = ", ".join(t for t, on in (("knee", r["knee"]),
                                             ("nearest best D", r["nearest_optimum"])) if on)
            rows.append([str(r["point"]), _g(r[a]), _g(r[b]), f"{r['D']:.3f}",
                         "-" if r["chance_all"] is None else f"{r['chance_all']:.0%}",
                         esc(r["piece"]) or "-", note])
        out.append("<div class='scroll'>" + _table(
            ["#", esc(a), esc(b), "D", "chance all in limits", "levels", "note"], rows,
            raw=True) + "</div>")
        others = trade["conflicts"].iloc[1:4]
        if len(others):
            out.append("<p class='note'>Next pairs by rank correlation of their d: "
                       + "; ".join(f"{esc(r.a)} with {esc(r.b)} {r.rho:.2f}"
                                   for r in others.itertuples())
                       + f". To trace another pair: tradeoff frontier STUDY --between "
                       "A,B.</p>")
        return "".join(out)

    def steadiness(self) -> str:
        from ..maps.steadiness_picture import steadiness_picture
        from ..search.sensitivity import MOVES, STILL

        trade = self.data["trade"]
        s = trade["steadiness"]
        if s is None:
            return f"<p>Not judged: {esc(trade['steadiness_note'])}.</p>"
        ch = s.changes
        out = [f"<p class='lead'>{esc(s.sentence)}</p>",
               "<p>Each goal's weight was halved and doubled, and each of its limits moved "
               "by 10 % of its span down and up, one change at a time; after each change "
               "the best settings were found again.</p>"]
        if s.binding:
            out.append(f"<p>Goals holding the recommendation in place (a change to them "
                       f"moves it by more than {STILL} coded units): "
                       f"<b>{esc(', '.join(self._item(b).label for b in s.binding))}"
                       "</b>.</p>")
        out.append(_chart_div(_svg(steadiness_picture(ch, still=STILL, moves=MOVES))))
        moved = ch[(ch["move"] > STILL) | (ch["levels_changed"] != "")]
        factors = [c[6:] for c in ch.columns if c.startswith("shift:")]
        preds = [c[5:] for c in ch.columns if c.startswith("pred:")]
        if len(moved):
            # two tables, settings then predictions, so each fits the page's width
            records = moved.to_dict("records")
            head = (["change", "moved (coded)", "D"]
                    + [esc(self._item(f).display()) for f in factors] + ["levels"])
            rows = [[esc(r["words"]), f"{r['move']:.3f}",
                     f"{r['D']:.3f}" if r["feasible"] else "none"]
                    + [_shift(r[f"shift:{f}"], s.baseline["settings"][f]) for f in factors]
                    + [esc(r["levels_changed"]) or "same"] for r in records]
            out.append("<p>The changes that move it, and how far each setting moves (in "
                       "its own units):</p><div class='scroll'>"
                       + _table(head, rows, raw=True) + "</div>")
            head = ["change"] + [esc(self._item(p).display()) for p in preds]
            rows = [[esc(r["words"])]
                    + [_shift(r[f"pred:{p}"], s.baseline["predicted"][p]) for p in preds]
                    for r in records]
            out.append("<p>How far each response's prediction moves with them (in its own "
                       "units):</p><div class='scroll'>" + _table(head, rows, raw=True)
                       + "</div>")
        still = len(ch) - len(moved)
        if still:
            out.append(f"<p class='note'>The other {still} changes leave the settings "
                       f"within {STILL} coded units of the recommendation.</p>")
        return "".join(out)

    def _val(self, point: dict, name: str):
        if name in point["predicted"]:
            return point["predicted"][name]
        return point["settings"][name]


def _shift(v: float, base: float) -> str:
    """A move, signed; rounding dust of the polish (a millionth of the value) is 0."""
    return "0" if abs(v) < 1e-6 * max(1.0, abs(base)) else f"{v:+.3g}"
