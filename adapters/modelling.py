"""Constraint helpers shared by the problem forms: add a constraint, report it, repair a state.

Helpers extend the form **in place** and return the new :class:`Constraint` (or a list of them);
the form's cached canonical problem is rebuilt on next use, with each constraint's penalty
(adapters/constraints.py; docs/conventions.md, "Constraints as penalties").  They count the
variables that take the form's counted value: x = 1 (QUBO), s = +1 (Ising), side 1 (MaxCut).

With constraints, :meth:`evaluate` is the caller's full objective *including* the penalty terms
(they are 0 on a feasible state); :meth:`objective_without_penalties` leaves them out.
"""

from __future__ import annotations

from typing import Any, Callable, ClassVar, Hashable, Iterable, Mapping

import numpy as np

from spinward.core.canonical import CanonicalProblem
from spinward.core.errors import InputError
from spinward.core.model import ProblemForm

from .constraints import (SLACK, Constraint, balance_range, check_weight, count_range, penalised,
                          penalty_resolution, report, resolve_labels, resolve_weights, residual_step,
                          slack_coefficients)


class Modelling(ProblemForm):
    """Constraint helpers and the core's constraint hooks, for forms that cache their canonical problem."""

    #: the value the helpers count: indicator x_i = 1 when variable i takes it
    counted: ClassVar[int] = 1
    _constraints: list[Constraint]

    # --- implemented by the form ---
    def base_canonical(self) -> CanonicalProblem:  # pragma: no cover - abstract
        """The canonical problem without penalty terms."""
        raise NotImplementedError

    def base_resolution(self) -> float | None:  # pragma: no cover - abstract
        raise NotImplementedError

    def _objective(self, values: np.ndarray) -> float:  # pragma: no cover - abstract
        """The caller's objective without penalties (caller domain, base variables in canonical order)."""
        raise NotImplementedError

    def _changed(self) -> None:  # pragma: no cover - abstract
        """Forget the cached canonical problem."""
        raise NotImplementedError

    # --- the helpers ---
    @property
    def constraints(self) -> tuple[Constraint, ...]:
        return tuple(self._constraints)

    def require_count(self, variables: Iterable[Hashable], count: int | tuple[int, int], *,
                      weight: float | None = None, name: str | None = None) -> Constraint:
        """Exactly ``count`` of ``variables`` take the counted value, or between ``low`` and ``high`` of them
        (inclusive) for ``count=(low, high)``.  ``weight`` (caller's units) replaces the automatic weight."""
        what = f"require_count({name or 'count'})"
        labels, index = resolve_labels(variables, self._index_of(), what)
        low, high = count_range(count, len(labels), what)
        return self._add(Constraint(self._name(name, "count"), "count", labels, index, np.ones(len(labels)),
                                    low, high, check_weight(weight)))

    def require_one_of(self, *groups: Iterable[Hashable] | Mapping[Any, Iterable[Hashable]],
                       weight: float | None = None) -> list[Constraint]:
        """Exactly one variable of each group takes the counted value.

        Each positional argument is one group of labels; a single mapping ``{name: group}`` names them.
        """
        named = groups[0].items() if len(groups) == 1 and isinstance(groups[0], Mapping) else \
            ((None, g) for g in groups)
        specs = [(name, group) for name, group in named]
        if not specs:
            raise InputError("require_one_of needs at least one group of labels")
        given, added = check_weight(weight), []
        taken = len(self._constraints)
        try:
            for name, group in specs:
                cname = self._name(None if name is None else str(name), "one-of")
                labels, index = resolve_labels(group, self._index_of(), f"require_one_of({cname})")
                self._constraints.append(Constraint(cname, "one-of", labels, index, np.ones(len(labels)), 1, 1, given))
                added.append(self._constraints[-1])
            self._relayout()
        except InputError:
            del self._constraints[taken:]
            self._relayout()
            raise
        return added

    def require_balance(self, tolerance: int = 0, *, variables: Iterable[Hashable] | None = None,
                        weight: float | None = None, name: str | None = None) -> Constraint:
        """The two values split ``variables`` (default: all) into groups whose sizes differ by at most
        ``tolerance``; with 0 and an odd count they differ by one.  For MaxCut: a balanced partition."""
        cname = self._name(name, "balance")
        labels, index = resolve_labels(self._base_labels() if variables is None else variables, self._index_of(),
                                       f"require_balance({cname})")
        low, high = balance_range(len(labels), tolerance)
        return self._add(Constraint(cname, "balance", labels, index, np.ones(len(labels)), low, high,
                                    check_weight(weight)))

    def require_sum(self, coefficients: Mapping[Any, float], total: float, *, weight: float | None = None,
                    name: str | None = None) -> Constraint:
        """Σ coefficients[label] · x_label = ``total`` over the indicators x (a linear equality)."""
        cname = self._name(name, "sum")
        if not isinstance(coefficients, Mapping):
            raise InputError(f"require_sum({cname}): give the coefficients as a dict {{label: a}}, got "
                             f"{type(coefficients).__name__}")
        labels, index = resolve_labels(coefficients, self._index_of(), f"require_sum({cname})")
        from .validate import check_number

        a = np.array([check_number(coefficients[label], f"coefficient of {label!r}") for label in labels])
        t = check_number(total, "total")
        keep = a != 0
        if not np.any(keep):
            raise InputError(f"require_sum({cname}): every coefficient is 0")
        labels, index, a = tuple(l for l, k in zip(labels, keep) if k), index[keep], a[keep]
        given = check_weight(weight)
        step = residual_step(a, t, f"require_sum({cname})", needed=given is None)
        return self._add(Constraint(cname, "sum", labels, index, a, t, t, given, step=step))

    def remove_constraint(self, name: str) -> None:
        """Drop the constraint called ``name`` (the others' automatic weights are re-derived)."""
        keep = [c for c in self._constraints if c.name != name]
        if len(keep) == len(self._constraints):
            raise InputError(f"no constraint is named {name!r}; names: {[c.name for c in self._constraints]}")
        self._constraints[:] = keep
        self._relayout()

    # --- the core's hooks ---
    def evaluate(self, values: np.ndarray) -> float:
        """The caller's objective, with each constraint's penalty (0 when it is satisfied)."""
        v = np.asarray(values)
        if not self._constraints:
            return self._objective(v)
        total = sum(c.penalty * c.penalty_value(*self._indicators(v, c)) for c in self._constraints)
        sign = 1.0 if self.sense == "min" else -1.0
        return self._objective(v[: len(self._base_labels())]) + sign * total

    def caller_count(self) -> int:
        """The caller's variables come first; slack variables of count constraints follow them."""
        return len(self._base_labels())

    def objective_without_penalties(self, values: np.ndarray) -> float:
        """The caller's objective from the base variables only (slack values, if given, are ignored)."""
        return self._objective(np.asarray(values)[: len(self._base_labels())])

    def constraint_report(self, values: np.ndarray) -> list[dict[str, Any]] | None:
        if not self._constraints:
            return None
        x = self._base_indicators(np.asarray(values))
        other = self.domain[1] if self.counted == self.domain[0] else self.domain[0]
        return [report(c, x, (self.counted, other)) for c in self._constraints]

    def repair(self, sigma: np.ndarray, should_stop: Callable[[], bool]) -> np.ndarray | None:
        done = self.repair_with_report(sigma, should_stop)
        return None if done is None else done[0]

    def repair_with_report(self, sigma: np.ndarray, should_stop: Callable[[], bool] = lambda: False
                           ) -> tuple[np.ndarray, dict[str, Any]] | None:
        """:meth:`repair`, with the objective before and after and the moves made (adapters/repair.py)."""
        if not self._constraints:
            return None
        from .repair import repair_state

        done = repair_state(self.base_canonical(), self._constraints, sigma, self._orientation(), should_stop)
        if done is None:
            return None
        base_spins, info = done
        x = (1 + self._orientation() * base_spins.astype(np.float64)) / 2
        slack = [2 * c.best_slack(x).astype(np.int8) - 1 for c in self._constraints]
        full = np.concatenate([base_spins, *slack]).astype(np.int8)
        info = {"objective_before": self.evaluate(self.decode(sigma)),
                "objective_after": self.evaluate(self.decode(full)), **info}
        return full, info

    def state_from(self, state: Any, what: str = "initial") -> np.ndarray:
        """:meth:`ProblemForm.state_from` in the caller's own variables: slack variables (if any) need no
        value; they are set to match the state (a dict or array may still include them)."""
        slack = sum(c.slack.size for c in self._constraints)
        if not slack:
            return super().state_from(state, what)
        nb = len(self._base_labels())
        if hasattr(state, "assignment") and hasattr(state, "array"):
            state = state.assignment
        if isinstance(state, Mapping):
            state = {label: state[label] for label in self._base_labels() if label in state} \
                if len(state) in (nb, nb + slack) else state
        elif not isinstance(state, (str, bytes)) and np.ndim(state) == 1 and len(state) == nb + slack:
            state = list(state)[:nb]
        base_spins = _BaseView(self).state_from(state, what)
        x = (1 + self._orientation() * base_spins.astype(np.float64)) / 2
        return np.concatenate([base_spins, *[2 * c.best_slack(x).astype(np.int8) - 1
                                             for c in self._constraints]]).astype(np.int8)

    def resolution(self) -> float | None:
        base = self.base_resolution()
        if not self._constraints or base is None:
            return base
        extra = penalty_resolution(self._constraints)
        return None if extra is None else min(base, extra)

    # --- plumbing ---
    def _canonical_with_constraints(self) -> CanonicalProblem:
        base = self.base_canonical()
        if not self._constraints:
            return base
        labels = self._base_labels() + tuple((SLACK, c.name, j) for c in self._constraints
                                             for j in range(c.slack.size))
        t = np.full(base.n, self._orientation())
        return penalised(base, self._constraints, labels, t)

    def _orientation(self) -> float:
        """t: σ = +1 means the counted value (t = +1) or the other one (t = −1)."""
        return 1.0 if self.counted == self.domain[0] else -1.0

    def _base_labels(self) -> tuple[Hashable, ...]:
        return self.base_canonical().labels

    def _index_of(self) -> dict[Hashable, int]:
        base = self.base_canonical()
        index = base.meta.get("_label_index")
        if index is None:
            index = {label: k for k, label in enumerate(base.labels)}
            base.meta["_label_index"] = index
        return index

    def _base_indicators(self, values: np.ndarray) -> np.ndarray:
        return (values[: len(self._base_labels())] == self.counted).astype(np.float64)

    def _indicators(self, values: np.ndarray, c: Constraint) -> tuple[np.ndarray, np.ndarray]:
        slack = values[c.slack_start:c.slack_start + c.slack.size]
        return self._base_indicators(values), (slack == self.domain[0]).astype(np.float64)

    def _name(self, name: str | None, kind: str) -> str:
        taken = {c.name for c in self._constraints}
        if name is not None:
            if not isinstance(name, str) or not name:
                raise InputError(f"a constraint name is a non-empty string, got {name!r}")
            if name in taken:
                raise InputError(f"a constraint named {name!r} exists already; choose another name")
            return name
        if kind == "balance" and kind not in taken:  # usually the only one
            return kind
        k = 1
        while f"{kind} {k}" in taken:
            k += 1
        return f"{kind} {k}"

    def _add(self, c: Constraint) -> Constraint:
        self._constraints.append(c)
        try:
            self._relayout()
        except InputError:
            self._constraints.pop()
            self._relayout()
            raise
        return c

    def _relayout(self) -> None:
        """Place slack variables after the base ones, re-derive automatic weights, drop the cache."""
        start = len(self._base_labels())
        for c in self._constraints:
            width = int(c.high - c.low) if c.is_range else 0
            c.slack = slack_coefficients(width - 1) if width >= 2 else np.zeros(0)
            c.slack_start = start
            start += c.slack.size
        resolve_weights(self._constraints, self.base_canonical(), self.base_resolution())
        self._changed()


class _BaseView(ProblemForm):
    """The form's base variables only, to read a caller's state without slack variables."""

    def __init__(self, form: Modelling) -> None:
        self.form, self.sense, self.domain = form.form, form.sense, form.domain  # type: ignore[misc]
        self._base = form.base_canonical()

    def canonical(self) -> CanonicalProblem:
        return self._base

    def evaluate(self, values: np.ndarray) -> float:  # pragma: no cover - never called
        raise NotImplementedError
