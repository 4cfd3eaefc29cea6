"""The report's numbers read back: the HTML page (parsed with the standard
library's html.parser) and the workbook (openpyxl), compared with
``optimize --json`` at the precision the page prints.

The page prints predictions, settings and interval ends with 4 significant
digits, d, D and coded settings with 3, and chances by the chance rule (one
decimal in percent, '> 99.9 %' and '< 0.1 %' at the ends), as the README says;
the formats are written out here, not imported.
"""
from __future__ import annotations

import math
from html.parser import HTMLParser

__all__ = ["check_report_html", "check_report_xlsx", "page_tables"]


def _g(x, digits: int = 4) -> str:
    if x is None:
        return "-"
    if isinstance(x, str):
        return x
    x = float(x)
    return f"{x:.{digits}g}" if math.isfinite(x) else "-"


def _chance(p) -> str:
    """The README's chance rule: percent with one decimal, clipped at the ends."""
    if p is None or not math.isfinite(float(p)):
        return "-"
    percent = 100.0 * float(p)
    if percent >= 99.95:
        return "> 99.9 %"
    if percent < 0.05:
        return "< 0.1 %"
    return f"{percent:.1f} %"


class _Tables(HTMLParser):
    """Every table of every section: {section id: [{"head": [...], "rows": [[...]]}]},
    and each section's bold texts in order."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.sections: dict[str, list] = {}
        self.bold: dict[str, list] = {}
        self._section = None
        self._table = None
        self._row = None
        self._cell = None
        self._in_head = False
        self._b = None

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag == "section":
            self._section = attrs.get("id")
            self.sections.setdefault(self._section, [])
            self.bold.setdefault(self._section, [])
        elif tag == "table" and self._section is not None:
            self._table = {"head": [], "rows": []}
            self.sections[self._section].append(self._table)
        elif tag == "thead":
            self._in_head = True
        elif tag == "tbody":
            self._in_head = False
        elif tag == "tr" and self._table is not None:
            self._row = []
        elif tag in ("td", "th") and self._row is not None:
            self._cell = []
        elif tag == "br" and self._cell is not None:
            self._cell.append("\n")
        elif tag == "b" and self._table is None:
            self._b = []

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self._row.append("".join(self._cell).strip())
            self._cell = None
        elif tag == "tr" and self._row is not None:
            (self._table["head"].extend(self._row) if self._in_head
             else self._table["rows"].append(self._row))
            self._row = None
        elif tag == "table":
            self._table = None
        elif tag == "b" and self._b is not None:
            self.bold[self._section].append("".join(self._b).strip())
            self._b = None
        elif tag == "section":
            self._section = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)
        if self._b is not None:
            self._b.append(data)


def page_tables(page: str) -> _Tables:
    parser = _Tables()
    parser.feed(page)
    return parser


def _setting_text(study, name, value) -> str:
    if isinstance(value, str):
        return value
    unit = study.factor(name).unit
    return f"{_g(value)} {unit}".strip()


def _find(tables, *headers):
    for t in tables:
        if all(h in t["head"] for h in headers):
            return t
    return None


def check_report_html(generated, study, printed: dict, page: str, outcome) -> None:
    """The recommended settings and the alternatives on the page equal the JSON."""
    parsed = page_tables(page)
    best = printed["best"]

    def fail(message):
        outcome.fail("report_html", "report", message)

    bold = parsed.bold.get("recommended", [])
    want = [_g(best["desirability"], 3)] + ([_chance(best["chance_all"])]
                                            if best["chance_all"] is not None else [])
    if bold[:len(want)] != want:
        fail(f"recommended: D and chance shown as {bold[:len(want)]}, the JSON gives {want}")
    tables = parsed.sections.get("recommended", [])
    settings = _find(tables, "name", "setting")
    if settings is None:
        fail("recommended: no table of settings")
    else:
        col = settings["head"].index
        for row in settings["rows"]:
            name = row[col("name")]
            if name not in best["settings"]:
                continue
            value = best["settings"][name]
            shown = _setting_text(study, name, value)
            if row[col("setting")] != shown:
                fail(f"recommended: '{name}' shown as {row[col('setting')]!r}, the JSON "
                     f"gives {shown!r}")
            if "coded" in settings["head"] and not isinstance(value, str):
                coded = best["coded"][name]
                dust = abs(coded) < 1e-9 and row[col("coded")] in ("0", "-0", "+0")
                if row[col("coded")] != _g(coded, 3) and not dust:
                    fail(f"recommended: '{name}' coded {row[col('coded')]!r}, the JSON "
                         f"gives {_g(best['coded'][name], 3)!r}")
    predictions = _find(tables, "predicted", "d")
    if predictions is None:
        if best["responses"]:
            fail("recommended: no table of predictions")
        return
    col = predictions["head"].index
    expected = []
    for name, o in best["responses"].items():
        # past what the storage supports: no chance, the storage needed instead
        far = o.get("extrapolated") == "far" and o.get("goal") != "none"
        chance = _chance(o["chance_in_limits"]) if not far else (
            f"not stated (store to {_g(o['storage_needed'])} "
            f"{study.response(name).unit})".replace(" )", ")"))
        expected.append((name, _g(o["predicted"]), _g(o["desirability"], 3),
                         chance, f"{_g(o['pi'][0])} .. {_g(o['pi'][1])}"))
    for name, d in best["factor_desirability"].items():
        expected.append((name, _g(best["settings"][name]), _g(d, 3), None, None))
    chance_col = next((h for h in predictions["head"] if h.startswith("chance")), None)
    pi_col = next((h for h in predictions["head"] if "prediction interval" in h), None)
    if len(predictions["rows"]) != len(expected):
        fail(f"recommended: {len(predictions['rows'])} prediction rows, the JSON has "
             f"{len(expected)}")
    for row, (name, pred, d, chance, pi) in zip(predictions["rows"], expected):
        got = (row[col("predicted")], row[col("d")])
        if got != (pred, d):
            fail(f"recommended: '{name}' predicted, d shown as {got}, the JSON gives "
                 f"{(pred, d)}")
        if chance is not None and chance_col and row[col(chance_col)] != chance:
            fail(f"recommended: chance of '{name}' shown as {row[col(chance_col)]!r}, the "
                 f"JSON gives {chance!r}")
        if pi is not None and pi_col and row[col(pi_col)] != pi:
            fail(f"recommended: interval of '{name}' shown as {row[col(pi_col)]!r}, the "
                 f"JSON gives {pi!r}")
    sols = printed["solutions"]
    if len(sols) > 1:
        table = _find(parsed.sections.get("alternatives", []), "rank", "D")
        if table is None:
            fail("alternatives: no table of solutions")
            return
        col = table["head"].index
        for row, s in zip(table["rows"], sols):
            got = (row[0], row[col("D")])
            want = (s["label"], _g(s["desirability"], 3))
            if got != want:
                fail(f"alternatives: {got} shown, the JSON gives {want}")
            for name, value in s["settings"].items():
                if name in table["head"] and row[col(name)] != _setting_text(study, name,
                                                                             value):
                    fail(f"alternatives: {s['label']} '{name}' shown as {row[col(name)]!r}, "
                         f"the JSON gives {_setting_text(study, name, value)!r}")


def check_report_xlsx(generated, study, printed: dict, path, outcome) -> None:
    """The workbook's summary and solutions sheets hold the JSON's numbers."""
    import openpyxl

    def fail(message):
        outcome.fail("report_xlsx", "report", message)

    book = openpyxl.load_workbook(path, read_only=True, data_only=True)
    try:
        sheets = {ws.title: [list(r) for r in ws.iter_rows(values_only=True)]
                  for ws in book.worksheets}
    finally:
        book.close()
    if "solutions" not in sheets:
        fail(f"no 'solutions' sheet (sheets: {list(sheets)})")
        return
    head, *rows = sheets["solutions"]
    col = head.index
    seen = 0
    for s in printed["solutions"]:
        for name, o in s["responses"].items():
            match = [r for r in rows if r[col("solution")] == s["label"]
                     and r[col("response")] == name]
            if len(match) != 1:
                fail(f"solutions: {len(match)} rows for {s['label']} '{name}'")
                continue
            seen += 1
            r = match[0]
            # past what the storage supports no chance is stated (derive/reach.py)
            withheld = any(v.get("extrapolated") == "far" and v.get("goal") != "none"
                           for v in s["responses"].values())
            pairs = {"D": s["desirability"], "chance all within limits":
                     "not stated" if withheld else s["chance_all"],
                     "predicted": o["predicted"], "desirability": o["desirability"],
                     "pi low": o["pi"][0], "pi high": o["pi"][1], "ci low": o["ci"][0],
                     "ci high": o["ci"][1], "chance within limits": o["chance_in_limits"]}
            pairs.update(s["settings"])
            for key, want in pairs.items():
                if key not in head:
                    fail(f"solutions: no column '{key}'")
                    continue
                got = r[col(key)]
                if got in ("", None) and want is None:
                    continue
                if isinstance(want, str) or isinstance(got, str):
                    ok = str(got) == str(want)
                else:
                    ok = got is not None and want is not None and float(got) == float(want)
                if not ok:
                    fail(f"solutions: {s['label']} '{name}' {key} = {got!r}, the JSON "
                         f"gives {want!r}")
    if seen != len(rows):
        fail(f"solutions: {len(rows)} rows, the JSON has {seen}")
    summary = {r[0]: r[1] for r in sheets.get("summary", [])[1:]}
    best = printed["best"]
    if summary.get("overall desirability D") != str(best["desirability"]):
        fail(f"summary: D {summary.get('overall desirability D')!r}, the JSON gives "
             f"{best['desirability']!r}")
    for name, value in best["settings"].items():
        got = summary.get(f"best setting: {name}")
        if got != str(value):
            fail(f"summary: best setting '{name}' {got!r}, the JSON gives {value!r}")
