"""The result model: frozen, validated, JSON round-trippable (pydantic v2).

``assignment`` maps each caller label to its value in the caller's domain
(0/1 for QUBO, ±1 for Ising, side 0/1 for MaxCut); ``array`` holds the same
values in the problem's label order.  ``objective`` is recomputed from the
caller's own input, in the caller's sense.  ``bound`` is in the caller's units
(a lower bound when minimising, an upper bound when maximising).
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any, Hashable, Literal

import numpy as np
from pydantic import BaseModel, ConfigDict, Field, field_serializer, field_validator

Status = Literal["optimal", "feasible", "time-limit", "interrupted"]
TINY = 1e-300


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
        """A few human lines: objective, sense, method, status, bound, time, warnings."""
        goal = "minimise" if self.sense == "min" else "maximise"
        lines = [f"objective: {self.objective:.12g}  ({goal}, {self.form})",
                 f"solver:    {self.solver}   status: {self.status}   exact: {self.exact}"]
        if self.bound is not None:
            lines.append(f"bound:     {self.bound:.12g}  ({self.bound_kind})   gap: {self.gap:.3g}")
        lines.append(f"time:      {self.wall_time:.3f} s   seed: {self.seed}")
        lines += [f"warning:   {w}" for w in self.warnings]
        return "\n".join(lines)
