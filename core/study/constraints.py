"""Linear rules among factors, such as ``protein + 2*glycerol <= 36``.

A rule is read by a small grammar of our own (a tokenizer and a recursive
descent parser; nothing is ever evaluated as Python):

    rule    := side ( "<=" | ">=" | "<" | ">" ) side
    side    := term { ("+" | "-") term }
    term    := unary { ("*" | "/") unary }
    unary   := ("+" | "-") unary | number | factor name | "(" side ")"

Factor names stand for their settings in natural units. Each side must be
linear in the factors: a number times a factor is fine, a factor times a
factor, a factor divided by anything but a number, and powers are refused.
``<`` and ``>`` are treated like ``<=`` and ``>=`` (settings are continuous).
A rule becomes ``a @ x_natural <= b``.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from ..errors import StudyError, did_you_mean

__all__ = ["LinearRule", "parse_rule", "study_rules", "check_rules",
           "rule_arrays", "rules_satisfied"]

_NUMBER = re.compile(r"(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_WORD = re.compile(r"[A-Za-z_][A-Za-z0-9_.%]*")
_WORD_CHAR = re.compile(r"[A-Za-z0-9_]")
_COMPARE = ("<=", ">=", "<", ">")


@dataclass(frozen=True)
class LinearRule:
    """A parsed rule: ``sum(coefficients[f] * f) <= bound`` in natural units."""

    rule: str
    label: str
    coefficients: dict
    bound: float

    def value(self, settings: dict) -> float:
        """Left side minus bound at natural ``settings`` (<= 0 when the rule holds)."""
        return sum(c * settings[f] for f, c in self.coefficients.items()) - self.bound


class _Fail(Exception):
    """A parse problem; turned into a StudyError that names the rule."""


def parse_rule(rule: str, factors, *, label: str | None = None) -> LinearRule:
    """Parse one rule against the study's factors.

    Parameters
    ----------
    rule : str
        For example ``"protein + 2*glycerol <= 36"``.
    factors : sequence of Factor
        The study's factors; only numeric ones may appear in a rule.
    label : str, optional
        A short name for the rule shown in messages.

    Raises
    ------
    StudyError
        The rule cannot be read, names an unknown or categorical factor, or is
        not linear. The message names the rule.
    """
    try:
        tokens = _tokenize(rule, factors)
        parser = _Parser(tokens, rule)
        left = parser.side()
        if parser.peek()[0] != "cmp":
            raise _Fail(_expected("one of <= >= < >", parser.peek(), rule))
        op = parser.take()[1]
        right = parser.side()
        if parser.peek()[0] == "cmp":
            raise _Fail("has more than one comparison: write one rule per [[constraints]]")
        if parser.peek()[0] != "end":
            raise _Fail(_expected("the end of the rule", parser.peek(), rule))
    except _Fail as exc:
        raise StudyError(f"constraint '{rule}': {exc}") from None
    # Move everything to the left: (left - right) <= 0, or >= 0 flipped.
    sign = 1.0 if op in ("<=", "<") else -1.0
    coef = {}
    for name in set(left[0]) | set(right[0]):
        value = sign * (left[0].get(name, 0.0) - right[0].get(name, 0.0))
        if value != 0.0:
            coef[name] = value
    bound = sign * (right[1] - left[1])
    if not coef:
        raise StudyError(f"constraint '{rule}': names no factor (or its factors cancel "
                         "out): a rule limits factor settings, e.g. "
                         "'protein + 2*glycerol <= 36'")
    order = [f.name for f in factors]
    coef = {name: coef[name] for name in order if name in coef}
    return LinearRule(rule=rule, label=label or rule, coefficients=coef, bound=bound)


def study_rules(study) -> tuple[LinearRule, ...]:
    """Every ``[[constraints]]`` rule of a study, parsed."""
    return tuple(parse_rule(c["rule"], study.factors, label=c.get("label"))
                 for c in study.constraints)


def check_rules(factors, constraints, fname: str = "study") -> None:
    """Check every rule when a study is built; raise a StudyError naming the file."""
    for c in constraints:
        try:
            parse_rule(c["rule"], factors, label=c.get("label"))
        except StudyError as exc:
            raise StudyError(f"{fname}: [[constraints]] {exc}") from None


def rule_arrays(study, *, coded: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """All rules as ``A @ x <= b`` with one column per study factor.

    With ``coded=True`` (default) ``x`` is in coded units (natural =
    centre + coded * half_range); columns of categorical factors are 0.
    """
    rules = study_rules(study)
    k = len(study.factors)
    A = np.zeros((len(rules), k))
    b = np.zeros(len(rules))
    index = {f.name: j for j, f in enumerate(study.factors)}
    for i, r in enumerate(rules):
        b[i] = r.bound
        for name, c in r.coefficients.items():
            A[i, index[name]] = c
    if coded:
        centre = np.array([0.0 if f.is_categorical else f.centre for f in study.factors])
        half = np.array([0.0 if f.is_categorical else f.half_range for f in study.factors])
        b = b - A @ centre
        A = A * half
    return A, b


def rules_satisfied(study, X_coded, *, tol: float = 1e-9) -> np.ndarray:
    """(n,) booleans: which coded points meet every rule of the study."""
    X = np.atleast_2d(np.asarray(X_coded, dtype=float))
    A, b = rule_arrays(study, coded=True)
    if len(b) == 0:
        return np.ones(len(X), dtype=bool)
    scale = np.maximum(1.0, np.abs(b))
    return np.all(X @ A.T - b <= tol * scale, axis=1)


# --------------------------------------------------------------------------
# Tokenizer and parser


def _tokenize(text: str, factors) -> list[tuple[str, object, int]]:
    names = sorted((f.name for f in factors), key=len, reverse=True)
    by_name = {f.name: f for f in factors}
    tokens = []
    i = 0
    while i < len(text):
        ch = text[i]
        if ch.isspace():
            i += 1
            continue
        name = _known_name(text, i, names)
        if name is not None:
            if by_name[name].is_categorical:
                raise _Fail(f"'{name}' is a categorical factor: rules may use numeric "
                            "factors only (categorical ones are searched over their levels)")
            tokens.append(("name", name, i))
            i += len(name)
            continue
        if text.startswith("**", i) or ch == "^":
            raise _Fail("powers are not allowed: a rule must be linear in the factors")
        for op in _COMPARE:
            if text.startswith(op, i):
                tokens.append(("cmp", op, i))
                i += len(op)
                break
        else:
            if ch == "=" or text.startswith("!=", i):
                raise _Fail("uses '=': write a limit with <= or >= (an exact equality "
                            "would fix one factor: leave that factor out of the study)")
            if ch in "+-*/()":
                tokens.append((ch, ch, i))
                i += 1
                continue
            match = _NUMBER.match(text, i)
            if match:
                tokens.append(("num", float(match.group()), i))
                i = match.end()
                continue
            match = _WORD.match(text, i)
            if match:
                word = match.group()
                hint = did_you_mean(word, by_name) or f": the factors are {', '.join(by_name)}"
                raise _Fail(f"'{word}' is not a factor of the study{hint}")
            raise _Fail(f"unexpected character '{ch}' at position {i + 1}: use numbers, "
                        "factor names, + - * / ( ) and one of <= >= < >")
    tokens.append(("end", None, len(text)))
    return tokens


def _known_name(text: str, i: int, names: list[str]) -> str | None:
    for name in names:  # longest first, so 'temp_2' wins over 'temp'
        if text.startswith(name, i):
            after = i + len(name)
            if after < len(text) and _WORD_CHAR.match(text[after]) \
                    and _WORD_CHAR.match(name[-1]):
                continue
            if i > 0 and re.match(r"[A-Za-z_]", text[i - 1]) and _WORD_CHAR.match(name[0]):
                continue
            return name
    return None


def _show(token) -> str:
    kind, value, _ = token
    if kind == "end":
        return "the end of the rule"
    if kind == "num":
        return f"'{value:g}'"
    return f"'{value}'"


def _expected(what: str, token, rule: str) -> str:
    return f"expected {what} but found {_show(token)} at position {token[2] + 1}"


class _Parser:
    """Recursive descent over tokens; each value is (coefficients, constant)."""

    def __init__(self, tokens, rule):
        self.tokens = tokens
        self.pos = 0
        self.rule = rule

    def peek(self):
        return self.tokens[self.pos]

    def take(self):
        token = self.tokens[self.pos]
        self.pos += 1
        return token

    def side(self):
        value = self.term()
        while self.peek()[0] in ("+", "-"):
            op = self.take()[0]
            other = self.term()
            value = _add(value, other, 1.0 if op == "+" else -1.0)
        return value

    def term(self):
        value = self.unary()
        while True:
            kind = self.peek()[0]
            if kind == "*":
                self.take()
                other = self.unary()
                if value[0] and other[0]:
                    raise _Fail(f"multiplies {_describe(value)} by {_describe(other)}: "
                                "a rule must be linear (a number times a factor)")
                value = _scale(other, value[1]) if not value[0] else _scale(value, other[1])
            elif kind == "/":
                self.take()
                other = self.unary()
                if other[0]:
                    raise _Fail(f"divides by {_describe(other)}: a rule must be linear; "
                                "multiply both sides out instead")
                if other[1] == 0:
                    raise _Fail("divides by zero")
                value = _scale(value, 1.0 / other[1])
            elif kind in ("num", "name", "("):
                token = self.peek()
                raise _Fail(f"two terms with no operator between them before "
                            f"{_show(token)}: write '*' for a product, e.g. 2*protein")
            else:
                return value

    def unary(self):
        kind, value, pos = self.peek()
        if kind in ("+", "-"):
            self.take()
            inner = self.unary()
            return inner if kind == "+" else _scale(inner, -1.0)
        if kind == "num":
            self.take()
            return ({}, value)
        if kind == "name":
            self.take()
            return ({value: 1.0}, 0.0)
        if kind == "(":
            self.take()
            inner = self.side()
            if self.peek()[0] != ")":
                raise _Fail(_expected("')'", self.peek(), self.rule))
            self.take()
            return inner
        raise _Fail(_expected("a number, a factor name or '('", self.peek(), self.rule))


def _add(a, b, sign):
    coef = dict(a[0])
    for name, c in b[0].items():
        coef[name] = coef.get(name, 0.0) + sign * c
    return ({k: v for k, v in coef.items() if v != 0.0}, a[1] + sign * b[1])


def _scale(a, factor):
    if factor == 0:
        return ({}, 0.0)
    return ({k: v * factor for k, v in a[0].items()}, a[1] * factor)


def _describe(value) -> str:
    names = list(value[0])
    return f"'{names[0]}'" if len(names) == 1 else \
        "an expression with " + ", ".join(f"'{n}'" for n in names)
