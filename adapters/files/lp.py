"""Read the binary-quadratic subset of the plain-text LP format as a QUBO with equality constraints.

Accepted (section keywords in any case):

    \\ a comment (also after a statement)
    Minimize                      (or Maximize; also minimise, min, maximise, max, …)
     obj: 3 x + 2 y - z + [ 4 x * y - 2 z ^ 2 ] / 2 + 5
    Subject To                    (or such that, st, s.t.)
     pick: x + y + z = 2          (linear equalities only: each becomes require_sum)
    Bounds                        (only bounds every binary already has: 0 <= x <= 1, x <= 1, x >= 0)
     0 <= x <= 1
    Binary                        (or binaries, bin: every variable must be listed here)
     x y z
    End

The quadratic part sits in brackets followed by ``/ 2``: [q x * y] / 2 adds (q/2)·x·y, and
[q x ^ 2] / 2 adds (q/2)·x (x² = x for binaries).  A maximisation is read as the minimisation of the
negated objective, and the form notes it.  Anything else (inequalities, continuous or integer
variables, quadratic constraints, other sections) is refused with an error naming the line.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from spinward.core.errors import FileFormatError

from ..qubo import QUBO
from .safety import checked_path, read_text

SECTIONS = {
    "minimize": "min", "minimise": "min", "minimum": "min", "min": "min",
    "maximize": "max", "maximise": "max", "maximum": "max", "max": "max",
    "subject to": "st", "such that": "st", "st": "st", "s.t.": "st",
    "bounds": "bounds", "bound": "bounds",
    "binary": "binary", "binaries": "binary", "bin": "binary",
    "end": "end",
}
REFUSED_SECTIONS = {"general": "general (integer) variables", "generals": "general (integer) variables",
                    "gen": "general (integer) variables", "integer": "integer variables",
                    "integers": "integer variables", "semi-continuous": "semi-continuous variables",
                    "semis": "semi-continuous variables", "semi": "semi-continuous variables",
                    "sos": "special ordered sets", "pwlobj": "piecewise-linear objectives",
                    "lazy constraints": "lazy constraints", "user cuts": "user cuts"}
TOKEN = re.compile(r"\s*(?:(?P<num>(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)|(?P<op><=|>=|=<|=>|[-+*^\[\]/:<>=])"
                   r"|(?P<name>[A-Za-z_!\"#$%&(){},;?@'`|~][A-Za-z0-9_.!\"#$%&(){},;?@'`|~]*))")
RELATIONS = {"<=", ">=", "=<", "=>", "<", ">", "="}


@dataclass
class Token:
    kind: str
    text: str
    line: int


@dataclass
class Model:
    sense: str = "min"
    linear: dict[str, float] = field(default_factory=dict)
    quadratic: dict[tuple[str, str], float] = field(default_factory=dict)
    offset: float = 0.0
    constraints: list[tuple[str | None, dict[str, float], float, int]] = field(default_factory=list)
    binaries: dict[str, None] = field(default_factory=dict)   # in the order listed
    seen: dict[str, int] = field(default_factory=dict)   # variable → first line it appears on


def read_lp(path: Any) -> QUBO:
    """The QUBO (with its equality constraints) that an LP file describes; see the module docstring."""
    p = checked_path(path)
    model = parse(read_text(p), p)
    return build(model, p)


def parse(text: str, p: Path) -> Model:
    model = Model()
    for section, tokens, line in split_sections(text, p):
        if section in ("min", "max"):
            model.sense = section
            read_objective(tokens, model, p, line)
        elif section == "st":
            read_constraints(tokens, model, p)
        elif section == "bounds":
            read_bounds(tokens, p)
        elif section == "binary":
            for t in tokens:
                if t.kind != "name":
                    raise FileFormatError(f"{p}:{t.line}: expected a variable name in the Binary section, got {t.text!r}")
                model.binaries.setdefault(t.text, None)
    return model


def split_sections(text: str, p: Path) -> list[tuple[str, list[Token], int]]:
    """(section, its tokens, its line), with comments removed; the first section must be the objective."""
    out: list[tuple[str, list[Token], int]] = []
    for number, raw in enumerate(text.splitlines(), start=1):
        line = raw.split("\\", 1)[0].strip()
        if not line:
            continue
        key = " ".join(line.lower().split())
        if key in REFUSED_SECTIONS:
            raise FileFormatError(f"{p}:{number}: {REFUSED_SECTIONS[key]} are not binary-quadratic; only a quadratic "
                                  f"objective over binary variables with linear equalities can be read")
        if key in SECTIONS:
            if SECTIONS[key] == "end":
                return out
            if not out and SECTIONS[key] not in ("min", "max"):
                raise FileFormatError(f"{p}:{number}: the file must start with Minimize or Maximize, got {line!r}")
            out.append((SECTIONS[key], [], number))
            continue
        if not out:
            raise FileFormatError(f"{p}:{number}: expected Minimize or Maximize before {line!r}")
        out[-1][1].extend(tokenize(line, number, p))
    return out


def tokenize(line: str, number: int, p: Path) -> list[Token]:
    tokens, pos = [], 0
    while pos < len(line):
        m = TOKEN.match(line, pos)
        if m is None or m.end() == pos:
            rest = line[pos:].strip()
            if not rest:
                break
            raise FileFormatError(f"{p}:{number}: cannot read {rest[:20]!r}")
        kind = m.lastgroup or "op"
        tokens.append(Token(kind, m.group(kind), number))
        pos = m.end()
    return tokens


class Cursor:
    """Walks a token list, naming the line of any defect."""

    def __init__(self, tokens: list[Token], p: Path, line: int) -> None:
        self.tokens, self.k, self.p, self.line = tokens, 0, p, line

    def peek(self, ahead: int = 0) -> Token | None:
        j = self.k + ahead
        return self.tokens[j] if j < len(self.tokens) else None

    def take(self) -> Token:
        t = self.peek()
        if t is None:
            raise FileFormatError(f"{self.p}:{self.line}: the statement ends too early")
        self.k += 1
        self.line = t.line
        return t

    def fail(self, message: str) -> FileFormatError:
        t = self.peek()
        return FileFormatError(f"{self.p}:{t.line if t else self.line}: {message}")


def read_label(cur: Cursor) -> str | None:
    t, colon = cur.peek(), cur.peek(1)
    if t is not None and t.kind == "name" and colon is not None and colon.text == ":":
        cur.take()
        cur.take()
        return t.text
    return None


def read_objective(tokens: list[Token], model: Model, p: Path, line: int) -> None:
    cur = Cursor(tokens, p, line)
    read_label(cur)
    while cur.peek() is not None:
        ahead = 0
        while cur.peek(ahead) is not None and cur.peek(ahead).text in ("+", "-"):  # type: ignore[union-attr]
            ahead += 1
        if cur.peek(ahead) is not None and cur.peek(ahead).text == "[":  # type: ignore[union-attr]
            sign = -1.0 if sum(cur.take().text == "-" for _ in range(ahead)) % 2 else 1.0
            read_quadratic(cur, model, sign)
            continue
        sign, coef, name = read_term(cur, model)
        if name is None:
            model.offset += sign * coef
        else:
            model.linear[name] = model.linear.get(name, 0.0) + sign * coef


def read_term(cur: Cursor, model: Model) -> tuple[float, float, str | None]:
    """[±] [number] [name]: (sign, coefficient, name or None for a constant)."""
    sign = 1.0
    while cur.peek() is not None and cur.peek().text in "+-":  # type: ignore[union-attr]
        sign *= -1.0 if cur.take().text == "-" else 1.0
    coef, name, number = 1.0, None, False
    t = cur.peek()
    if t is not None and t.kind == "num":
        coef, number = float(cur.take().text), True
        t = cur.peek()
    if t is not None and t.kind == "name":
        name = cur.take().text
        model.seen.setdefault(name, t.line)
    elif not number:
        raise cur.fail(f"expected a term (a number and/or a variable), got {t.text if t else 'the end'!r}")
    return sign, coef, name


def read_quadratic(cur: Cursor, model: Model, outer: float = 1.0) -> None:
    """[ q x * y ± q x ^ 2 … ] / 2, added as (q/2)·x·y (times ``outer``, the sign before the bracket)."""
    cur.take()  # "["
    while cur.peek() is not None and cur.peek().text != "]":  # type: ignore[union-attr]
        sign, coef, first = read_term(cur, model)
        if first is None:
            raise cur.fail("a quadratic term needs two variables (x * y) or a square (x ^ 2)")
        op = cur.take()
        if op.text == "^":
            if cur.take().text != "2":
                raise cur.fail("only squares (^ 2) are quadratic terms")
            second = first
        elif op.text == "*":
            t = cur.take()
            if t.kind != "name":
                raise cur.fail(f"expected a variable after '*', got {t.text!r}")
            second = t.text
            model.seen.setdefault(second, t.line)
        else:
            raise cur.fail(f"expected '*' or '^' in a quadratic term, got {op.text!r}")
        key = (first, second)
        model.quadratic[key] = model.quadratic.get(key, 0.0) + outer * sign * coef / 2.0
    if cur.peek() is None:
        raise cur.fail("a '[' is not closed")
    cur.take()  # "]"
    if cur.peek() is None or cur.take().text != "/" or cur.peek() is None or cur.take().text != "2":
        raise cur.fail("the quadratic part of an objective is written [ … ] / 2")


def read_constraints(tokens: list[Token], model: Model, p: Path) -> None:
    cur = Cursor(tokens, p, tokens[0].line if tokens else 0)
    while cur.peek() is not None:
        line = cur.peek().line  # type: ignore[union-attr]
        name = read_label(cur)
        terms: dict[str, float] = {}
        while cur.peek() is None or cur.peek().text not in RELATIONS:  # type: ignore[union-attr]
            if cur.peek() is None:
                raise cur.fail("a constraint needs '=' and a right-hand side")
            if cur.peek().text in ("[", "*", "^"):  # type: ignore[union-attr]
                raise cur.fail("quadratic constraints are not supported; only linear equalities")
            sign, coef, var = read_term(cur, model)
            if var is None:
                raise cur.fail("put constants on the right-hand side of a constraint")
            terms[var] = terms.get(var, 0.0) + sign * coef
        op = cur.take()
        if op.text != "=":
            raise FileFormatError(f"{p}:{op.line}: the constraint {name or ''!s} uses {op.text!r}; only equalities "
                                  f"(=) can be read, as penalties (an inequality needs slack variables: write them)")
        sign, rhs, var = read_term(cur, model)
        if var is not None:
            raise FileFormatError(f"{p}:{op.line}: the right-hand side must be a number, got variable {var!r}")
        model.constraints.append((name, terms, sign * rhs, line))


#: bound lines a binary variable already satisfies ("x" stands for the variable)
BINARY_BOUNDS = (["0", "<=", "x", "<=", "1"], ["x", "<=", "1"], ["x", ">=", "0"], ["0", "<=", "x"],
                 ["1", ">=", "x"], ["1", ">=", "x", ">=", "0"])


def read_bounds(tokens: list[Token], p: Path) -> None:
    """Accept only bounds a binary already has (0 <= x <= 1, x <= 1, x >= 0, …); refuse the rest."""
    by_line: dict[int, list[Token]] = {}
    for t in tokens:
        by_line.setdefault(t.line, []).append(t)
    for number, line in by_line.items():
        words = [{"=<": "<=", "=>": ">="}.get(t.text, t.text) if t.kind != "name" else "x" for t in line]
        if not any(_same(words, shape) for shape in BINARY_BOUNDS):
            raise FileFormatError(f"{p}:{number}: only binary bounds (0 <= x <= 1) can be read, got "
                                  f"{' '.join(t.text for t in line)!r}; to fix a variable, pass "
                                  f"solve(..., fix={{name: value}})")


def _same(words: list[str], shape: list[str]) -> bool:
    return len(words) == len(shape) and all(w == s or (s in "01" and _number(w) == float(s))
                                            for w, s in zip(words, shape))


def _number(text: str) -> float | None:
    try:
        return float(text)
    except ValueError:
        return None


def build(model: Model, p: Path) -> QUBO:
    undeclared = [name for name in model.seen if name not in model.binaries]
    if undeclared:
        name = undeclared[0]
        raise FileFormatError(f"{p}:{model.seen[name]}: variable {name!r} is not declared in a Binary section; "
                              f"only binary variables can be read")
    sign = -1.0 if model.sense == "max" else 1.0
    order = list(model.seen) + [v for v in model.binaries if v not in model.seen]  # first appearance
    terms: dict[tuple[str, str], float] = {(v, v): 0.0 for v in order}
    for v, c in model.linear.items():
        terms[(v, v)] += sign * c
    for (a, b), c in model.quadratic.items():
        terms[(a, b)] = terms.get((a, b), 0.0) + sign * c
    form = QUBO(terms, offset=sign * model.offset)
    if model.sense == "max":
        form.note(f"{p}: a maximisation, read as minimising the negated objective: the reported objective is "
                  f"the negative of the file's")
    for label, coefficients, rhs, line in model.constraints:
        try:
            form.require_sum(coefficients, rhs, name=label)
        except Exception as exc:  # an InputError about this constraint: say where it is
            raise FileFormatError(f"{p}:{line}: {exc}") from None
    return form
