"""Notes and warnings sorted into kinds, so a page shows one box per kind.

A study about storage or a panel collects many sentences: how each derived
response was computed, the runs flagged for each kind of reason, and the same
cautions for every response. Shown one box each, they bury what matters.
``group_notices`` sorts them into kinds (each with a short headline, the
responses and runs it concerns, and its sentences), and sets the cautions of
``tradeoff.cautions`` apart, each once, so a page states them once.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

from ..cautions import (ACCELERATED_CAUTIONS, BLEND_CAUTION, FOOD_CAUTIONS, PANEL_CAUTION,
                        SHELF_LIFE_CAUTION)

__all__ = ["NoticeGroup", "group_notices", "CAUTION_TEXTS", "is_caution"]

CAUTION_TEXTS = (*FOOD_CAUTIONS, SHELF_LIFE_CAUTION, *ACCELERATED_CAUTIONS, PANEL_CAUTION,
                 BLEND_CAUTION)

# "response 'x': ...", "storage 'hardness': ...", "panel 'liking': ..."
_SUBJECT = re.compile(r"^(response|storage|panel|factor|component) '([^']*)'[:]?\s*")
_RUNS = re.compile(r"run\(s\) (.*?)(?::\s|$)")
_RUN = re.compile(r"\brun ([A-Za-z_]*\d[\w.-]*)")
# the sentences that say how something was computed: read once, not warned about;
# each marker with the headline of its kind
_INFO = (("is derived (", "How each derived response is computed"),
         ("fit quality R-squared", "How well the storage curves fit"),
         ("lower and upper in the derivation table",
          "What lower and upper mean in the derivation tables"),
         ("standard error of each run's value", "Standard errors of the panel means"),
         ("pieces at", "Several pieces measured at one time"))


# warnings that differ only in a word or two, with the headline of their kind
_KINDS = ((re.compile(r"sits at the (high|low) edge of the searched region"),
           "Settings at the edge of the searched region"),
          (re.compile(r"lies outside the tested settings"),
           "Settings outside the tested ones"),
          (re.compile(r"sits at its (low|high) bound"), "Components at a bound of their own"))


@dataclass(frozen=True)
class NoticeGroup:
    """Sentences of one kind.

    Attributes
    ----------
    kind : str
        ``caution``, ``info`` (how something was computed) or ``warning``.
    headline : str
        What the sentences have in common, in sentence case.
    items : tuple of str
        The sentences, each once, in their first order.
    subjects : tuple of str
        The responses (or components, storage properties, panel attributes) they name.
    runs : tuple of str
        The runs they name.
    """

    kind: str
    headline: str
    items: tuple
    subjects: tuple = ()
    runs: tuple = ()
    subject_kind: str = "response"

    @property
    def summary(self) -> str:
        """The headline with how many responses and runs it concerns."""
        parts = []
        if len(self.subjects) > 1:
            parts.append(f"{len(self.subjects)} {self.subject_kind}s")
        if self.runs:
            parts.append(f"{len(self.runs)} run{'s' if len(self.runs) != 1 else ''}")
        if not parts and len(self.items) > 1:
            parts.append(f"{len(self.items)} notes")
        return self.headline + (f" ({', '.join(parts)})" if parts else "")


def is_caution(text: str) -> bool:
    """True when ``text`` is (or carries) one of the cautions of ``tradeoff.cautions``."""
    return any(c in text for c in CAUTION_TEXTS)


def _sentence_case(text: str) -> str:
    text = text.strip()
    words = text.split(" ")
    # a shouted lead ("EXTRAPOLATED FAR BEYOND") reads as an ordinary sentence
    lead = 0
    while lead < len(words) and words[lead].isupper() and len(words[lead]) > 1:
        lead += 1
    if lead:
        words[:lead] = [w.lower() for w in words[:lead]]
    text = " ".join(words)
    return text[:1].upper() + text[1:]


def _headline(rest: str) -> str:
    """The kind of a sentence: its words before the first colon or parenthesis,
    with numbers and quoted names taken out."""
    head = re.split(r"[:(;]", rest, maxsplit=1)[0]
    head = re.sub(r"'[^']*'", "", head)
    head = re.sub(r"[-+]?\d[\d.,]*(e[-+]?\d+)?", "#", head)
    head = re.sub(r"\s+", " ", head).strip(" ,.")
    return head


def _runs_of(text: str) -> list[str]:
    m = _RUNS.search(text)
    if m:
        return [r.split(" (")[0].strip() for r in re.split(r", (?![^()]*\))", m.group(1))
                if r.strip()]
    return _RUN.findall(text)


def group_notices(texts) -> list[NoticeGroup]:
    """Sort sentences into kinds: the cautions first (each once), then the notes on
    how things were computed, then the warnings, one group per kind."""
    cautions: list[str] = []
    groups: dict[tuple, dict] = {}
    for text in dict.fromkeys(str(t) for t in texts):
        found = [c for c in CAUTION_TEXTS if c in text]
        if found:
            cautions += [c for c in found if c not in cautions]
            continue
        m = _SUBJECT.match(text)
        subject = m.group(2) if m else None
        subject_kind = m.group(1) if m else "response"
        rest = text[m.end():] if m else text
        info = next((h for k, h in _INFO if k in text), None)
        kind = "warning" if info is None else "info"
        head = info or next((h for k, h in _KINDS if k.search(text)), None) or \
            _headline(rest)
        if head.startswith("run # "):   # "run R05 has ..." : the kind follows the run
            head = head[6:]
        key = (kind, head.lower())
        g = groups.setdefault(key, {"kind": kind, "head": head, "items": [],
                                    "subjects": [], "runs": [], "of": subject_kind})
        g["items"].append(text)
        if subject and subject not in g["subjects"]:
            g["subjects"].append(subject)
        if kind == "warning":  # the runs a warning names (a description names none)
            g["runs"] += [r for r in _runs_of(text) if r not in g["runs"]]
    out = [NoticeGroup("caution", "Cautions", tuple(cautions))] if cautions else []
    for kind in ("info", "warning"):
        for g in groups.values():
            if g["kind"] != kind:
                continue
            head = g["head"] if g["head"] and "#" not in g["head"] else \
                g["items"][0] if len(g["items"]) == 1 else "Notes"
            head = _sentence_case(head)
            out.append(NoticeGroup(kind, head, tuple(g["items"]), tuple(g["subjects"]),
                                   tuple(g["runs"]), g["of"]))
    return out
