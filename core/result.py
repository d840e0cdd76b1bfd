"""The result model: frozen, validated, JSON round-trippable (pydantic v2).

``assignment`` maps each caller label to its value in the caller's domain
(0/1 for QUBO, ±1 for Ising, side 0/1 for MaxCut); ``array`` holds the same
values in the problem's label order.  ``objective`` is recomputed from the
caller's own input, in the caller's sense.  ``bound`` is in the caller's units
(a lower bound when minimising, an upper bound when maximising).
"""

from __future__ import annotations

import html
import json
from pathlib import Path
from typing import Any, Hashable, Literal

import numpy as np
from pydantic import BaseModel, ConfigDict, Field, field_serializer, field_validator

Status = Literal["optimal", "feasible", "time-limit", "interrupted"]
TINY = 1e-300
#: significant digits shown for objectives and bounds (JSON keeps every digit)
SHOWN_DIGITS = 12
#: the most assignment entries that ``_repr_html_`` lists
HTML_ASSIGNMENT_ROWS = 2000


def shown(value: float) -> str:
    """A number as displayed: 12 significant digits, trailing zeros dropped.

    An objective is a float sum of the input's coefficients; its last digits are rounding
    noise, not information (a sum of two-decimal weights is 784.0099999999999 in float64).
    Twelve digits is what a sum of up to ~10⁴ terms keeps exactly (relative error ≲ n·2⁻⁵³),
    so two-decimal data shows as 784.01.  JSON output writes the exact float instead (the
    shortest text that reads back to the same value).
    """
    return format(value, f".{SHOWN_DIGITS}g")


def shown_gap(gap: float) -> str:
    """A relative gap as displayed: 3 significant digits, and 0 below the digits :func:`shown` keeps."""
    return "0" if abs(gap) < 10.0 ** -SHOWN_DIGITS else format(gap, ".3g")


class FrozenModel(BaseModel):
    """Base of the project's data models: immutable, no unknown fields."""

    model_config = ConfigDict(frozen=True, extra="forbid", arbitrary_types_allowed=False)


def _label_to_json(label: Hashable) -> Any:
    if isinstance(label, tuple):
        return [_label_to_json(x) for x in label]
    if isinstance(label, (np.integer,)):
        return int(label)
    if isinstance(label, (np.floating,)):
        return float(label)
    if label is None or isinstance(label, (str, int, float, bool)):
        return label
    return repr(label)


def _label_from_json(label: Any) -> Hashable:
    if isinstance(label, list):
        return tuple(_label_from_json(x) for x in label)
    return label


def jsonable(value: Any) -> Any:
    """Turn numpy scalars/arrays and tuples inside info into plain JSON types."""
    if isinstance(value, dict):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [jsonable(v) for v in value]
    if isinstance(value, np.ndarray):
        return jsonable(value.tolist())
    if isinstance(value, np.generic):
        return value.item()
    if value is None or isinstance(value, (str, int, float, bool)):
        return value
    return repr(value)


def relative_gap(bound: float | None, objective: float) -> float | None:
    """|bound − objective| / max(|bound|, tiny), or None without a bound."""
    if bound is None:
        return None
    return abs(bound - objective) / max(abs(bound), TINY)


class Answer(FrozenModel):
    """One of several good states (``solve(..., solutions=k)``), in the caller's terms."""

    assignment: dict[Hashable, int]
    objective: float

    @field_validator("assignment", mode="before")
    @classmethod
    def _pairs_to_dict(cls, value: Any) -> Any:
        if isinstance(value, list):
            return {_label_from_json(k): v for k, v in value}
        return value

    @field_serializer("assignment", when_used="json")
    def _dict_to_pairs(self, value: dict[Hashable, int]) -> list[list[Any]]:
        return [[_label_to_json(k), int(v)] for k, v in value.items()]


def constraints_line(report: Any) -> str:
    """'all 3 satisfied', or which are violated with their value and target (at most three named)."""
    bad = [c for c in report if not c.get("satisfied")]
    if not bad:
        return f"all {len(report)} satisfied"
    named = "; ".join(f"{c.get('name')} (value {c.get('value')}, target {c.get('target')})" for c in bad[:3])
    return f"{len(bad)} of {len(report)} VIOLATED: {named}" + ("; …" if len(bad) > 3 else "")


class Result(FrozenModel):
    """The answer to one ``solve()`` call, in the caller's terms.

    ``status``: "optimal" (proved), "time-limit" (the clock stopped a method before its own
    end), "feasible" (every method ended on its own, no proof), "interrupted" (Ctrl-C).
    ``feasible`` is None when the problem carries no constraints, else whether the state
    satisfies all of them (``constraints`` lists each one).  ``solutions`` holds the distinct
    good states asked for with ``solutions=k``, best first.
    """

    form: str
    assignment: dict[Hashable, int]
    array: tuple[int, ...]
    objective: float
    sense: Literal["min", "max"]
    bound: float | None = None
    bound_kind: Literal["certified", "estimated"] | None = None
    gap: float | None = None
    exact: bool = False
    solver: str
    status: Status
    wall_time: float = Field(ge=0)
    seed: int | None = None
    warnings: tuple[str, ...] = ()
    feasible: bool | None = None
    constraints: tuple[dict[str, Any], ...] = ()
    solutions: tuple[Answer, ...] = ()
    info: dict[str, Any] = Field(default_factory=dict)

    @field_validator("assignment", mode="before")
    @classmethod
    def _pairs_to_dict(cls, value: Any) -> Any:
        if isinstance(value, list):
            return {_label_from_json(k): v for k, v in value}
        return value

    @field_serializer("assignment", when_used="json")
    def _dict_to_pairs(self, value: dict[Hashable, int]) -> list[list[Any]]:
        return [[_label_to_json(k), int(v)] for k, v in value.items()]

    @field_validator("constraints", mode="before")
    @classmethod
    def _constraints_plain(cls, value: Any) -> Any:
        return tuple(jsonable(v) for v in value) if isinstance(value, (list, tuple)) else value

    @field_validator("info", mode="before")
    @classmethod
    def _info_plain(cls, value: Any) -> Any:
        """Keep info JSON-shaped (lists, not tuples or arrays) so a round trip is exact."""
        return jsonable(value) if isinstance(value, dict) else value

    @property
    def values(self) -> np.ndarray:
        """The assignment as an int8 array in label order."""
        return np.asarray(self.array, dtype=np.int8)

    @property
    def labels(self) -> list[Hashable]:
        return list(self.assignment)

    def to_json(self, indent: int | None = 2) -> str:
        return self.model_dump_json(indent=indent)

    @classmethod
    def from_json(cls, text: str) -> "Result":
        return cls.model_validate_json(text)

    def write_json(self, path: str | Path) -> None:
        Path(path).write_text(self.to_json() + "\n", encoding="utf-8")

    def write_csv(self, path: str | Path) -> None:
        """Write ``label,value`` rows (labels as JSON text when not plain)."""
        lines = ["label,value"]
        for k, v in self.assignment.items():
            text = k if isinstance(k, str) else json.dumps(_label_to_json(k))
            if any(c in str(text) for c in ',"\n'):
                text = '"' + str(text).replace('"', '""') + '"'
            lines.append(f"{text},{v}")
        Path(path).write_text("\n".join(lines) + "\n", encoding="utf-8")

    def summary(self) -> str:
        """A few human lines: objective, sense, method, status, bound, time, warnings (numbers as :func:`shown`)."""
        goal = "minimise" if self.sense == "min" else "maximise"
        lines = [f"objective: {shown(self.objective)}  ({goal}, {self.form})",
                 f"solver:    {self.solver}   status: {self.status}   exact: {self.exact}"]
        if self.bound is not None:
            lines.append(f"bound:     {shown(self.bound)}  ({self.bound_kind})   gap: {shown_gap(self.gap or 0.0)}")
        if self.feasible is not None:
            lines.append(f"constraints: {constraints_line(self.constraints)}")
        lines.append(f"time:      {self.wall_time:.3f} s   seed: {self.seed}")
        lines += [f"warning:   {w}" for w in self.warnings]
        return "\n".join(lines)

    def __repr__(self) -> str:
        """One line: form, size, objective and sense, status, solver, bound and gap, time, warnings."""
        goal = "min" if self.sense == "min" else "max"
        bound = "" if self.bound is None else \
            f", bound={shown(self.bound)} ({self.bound_kind}, gap {shown_gap(self.gap or 0.0)})"
        notes = f", {len(self.warnings)} warning{'s' * (len(self.warnings) != 1)}" if self.warnings else ""
        return (f"Result({self.form}, n={len(self.array)}, objective={shown(self.objective)} ({goal}), "
                f"status={self.status!r}, exact={self.exact}, solver={self.solver!r}{bound}, "
                f"{self.wall_time:.3g} s{notes})")

    def __str__(self) -> str:
        return self.summary()

    def _repr_html_(self) -> str:
        """Notebook display: the summary as a table, the warnings, and the assignment folded away."""
        e = html.escape
        goal = "minimise" if self.sense == "min" else "maximise"
        facts = [("objective", f"{shown(self.objective)} ({goal}, {self.form})"),
                 ("status", f"{self.status}; {'proved optimal' if self.exact else 'not proved optimal'}"),
                 ("solver", self.solver), ("variables", str(len(self.array)))]
        if self.bound is not None:
            facts += [("bound", f"{shown(self.bound)} ({self.bound_kind})"), ("gap", shown_gap(self.gap or 0.0))]
        else:
            facts.append(("bound", "none"))
        facts.append(("time", f"{self.wall_time:.3g} s, seed {self.seed}"))
        rows = "".join(f"<tr><th style='text-align:left'>{e(k)}</th><td style='text-align:left'>{e(v)}</td></tr>"
                       for k, v in facts)
        notes = "".join(f"<li>{e(w)}</li>" for w in self.warnings)
        warned = f"<p><b>warnings</b></p><ul>{notes}</ul>" if notes else ""
        return (f"<div class='spinward-result'><table>{rows}</table>{warned}"
                f"{self._assignment_html()}</div>")

    def _assignment_html(self) -> str:
        items = list(self.assignment.items())
        shown_items = items[:HTML_ASSIGNMENT_ROWS]
        cells = "".join(f"<tr><td>{html.escape(str(k))}</td><td>{int(v)}</td></tr>" for k, v in shown_items)
        more = (f"<p>… and {len(items) - len(shown_items)} more (see <code>assignment</code>)</p>"
                if len(items) > len(shown_items) else "")
        return (f"<details><summary>assignment ({len(items)} variables)</summary>"
                f"<table><thead><tr><th>label</th><th>value</th></tr></thead><tbody>{cells}</tbody></table>"
                f"{more}</details>")

    def plot(self, ax: Any = None) -> Any:
        """Draw the objective against wall time from the trace (or the final state alone), with the bound.

        Needs matplotlib (the ``[plot]`` extra).  Draws on ``ax`` when given, else on a new
        pyplot figure; returns the axes.  Units are the caller's; time is on a log scale.
        """
        try:
            import matplotlib
        except ImportError:
            from .errors import MissingDependencyError

            raise MissingDependencyError("Result.plot needs matplotlib: pip install 'spinward[plot]'") from None
        del matplotlib
        if ax is None:
            import matplotlib.pyplot as plt

            ax = plt.subplots(figsize=(6, 3.6))[1]
        trace = [(float(t), float(v)) for t, v in self.info.get("trace", [])]
        end = max(self.wall_time, trace[-1][0] if trace else 0.0, 1e-6)
        if trace:
            times = [max(t, 1e-6) for t, _ in trace] + [end]
            values = [v for _, v in trace] + [trace[-1][1]]
            ax.step(times, values, where="post", marker="o", markersize=3, label="best state so far")
        ax.plot([end], [self.objective], marker="*", markersize=10, linestyle="none",
                label=f"result {shown(self.objective)}")
        if self.bound is not None:
            ax.axhline(self.bound, color="grey", linestyle="--", label=f"bound {shown(self.bound)} ({self.bound_kind})")
        ax.set_xscale("log")
        ax.set_xlabel("wall time (s)")
        ax.set_ylabel(f"objective ({'minimise' if self.sense == 'min' else 'maximise'})")
        ax.set_title(f"{self.form} · {self.solver} · {self.status}", fontsize=10)
        ax.legend(fontsize=8)
        return ax
