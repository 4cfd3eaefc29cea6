"""The page of a study without factors: products stored or tasted, nothing varied.

Such a study has no models and no search; its results are each product's
derived values (shelf life with its bounds, activation energy, Q10, panel
means ...). ``_ProductSections`` renders its summary, those values, and the
products' table; the storage kinetics (with the Arrhenius charts) come from
``_EvidenceSections.kinetics``.
"""
from __future__ import annotations

from .data import _g, _r2
from .sections import _Sections, _cards, _table, esc

__all__ = ["_ProductSections"]


class _ProductSections(_Sections):
    """The sections of a study without factors, rendered from ``report_data``'s dict."""

    def product_summary(self) -> str:
        study = self.study
        n = self.data["study"]["runs"]
        parts = [f"<p>{esc(study.description)}</p>"] if study.description else []
        parts.append(
            f"<p>{n} product(s) measured, {len(study.responses)} response(s) "
            f"({esc(', '.join(r.label for r in study.responses))}). The study varies no "
            "factor, so there is nothing to model or search: the sections on models, "
            "recommended settings and maps are left out, and the results are each "
            "product's derived values below.</p>")
        cards = []
        for name, table in self.data["derived"].items():
            r = study.response(name)
            for _, row in table.iterrows():
                if row["value"] != row["value"]:
                    continue
                label = r.label if n == 1 else f"{r.label}, {row['run']}"
                cards.append((label, f"{_g(row['value'])} {r.unit}".strip(),
                              _interval(row, r.unit) or "no interval"))
        if cards:
            parts.append(_cards(cards[:8]))
        parts.append('<p class="note">Derived values are estimates from the measurements; '
                     'read the <a href="#cautions">cautions</a>.</p>')
        return "".join(parts)

    def derived_values(self) -> str:
        out = ["<p>Each response as derived from the storage or panel table, per product. "
               "Lower and upper give each estimate's interval where it has one (for a "
               "shelf life, where the one-sided bounds on either side reach the limit); "
               "points are the measurements or scores used.</p>"]
        from ..derive.derived import describe_derivation

        for name, table in self.data["derived"].items():
            r = self.study.response(name)
            rows = [[esc(t["run"]), _g(t["value"]), _g(_num(t, "lower")),
                     _g(_num(t, "upper")), _g(_num(t, "se")), esc(_count(t, "points")),
                     _r2(_num(t, "r_squared")), esc(t.get("flag") or "")]
                    for _, t in table.iterrows()]
            out.append(f'<div class="response"><h3>{esc(r.display())}</h3>'
                       f'<p class="note">{esc(describe_derivation(self.study, r))}</p>'
                       + _table(["product", "value", "lower", "upper", "standard error",
                                 "points", "R2", "flag"], rows, numeric={1, 2, 3, 4, 5, 6})
                       + "</div>")
        return "".join(out)

    def products(self) -> str:
        runs = self.data["runs"]
        marks = ["marks"] if runs["marks"].astype(bool).any() else []
        cols = ["run"] + [r for r in self.study.response_names if r in runs] + marks
        rows = [[esc(_g(v) if not isinstance(v, str) else v) for v in rec]
                for rec in runs[cols].itertuples(index=False)]
        return (f"<p>{len(runs)} product(s), in the order of the storage or panel table; "
                "no factor was varied.</p>"
                + '<div class="scroll">' + _table(
                    [esc(c) for c in cols], rows,
                    numeric=set(range(1, len(cols) - len(marks)))) + "</div>")


def _num(row, key):
    value = row.get(key)
    return None if value is None or value != value else float(value)


def _count(row, key) -> str:
    value = row.get(key)
    return "" if value is None or value != value else f"{int(value)}"


def _interval(row, unit: str) -> str:
    lo, hi = _num(row, "lower"), _num(row, "upper")
    if lo is None and hi is None:
        se = _num(row, "se")
        return "" if se is None else f"standard error {_g(se, 3)}"
    unit = f" {unit}" if unit else ""
    return f"lower {_g(lo)}, upper {'not reached' if hi is None else _g(hi)}{unit}"
