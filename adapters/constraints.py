"""Constraints on a problem form: linear conditions on its indicators, added to the objective as penalties.

Every constraint is linear in the form's **indicators**: x_i = 1 when variable i takes the form's
counted value (QUBO: x = 1; Ising: s = +1; MaxCut: side 1), else 0:

    low ≤ Σ_i a_i x_i ≤ high.

Penalty g (caller's units, times the weight P; added when minimising, subtracted when maximising):

- an equality (low = high = t): g = (Σ a x − t)²;
- a count range of two values (high = low + 1): g = (c − low)(c − low − 1);
- a wider count range: the same with binary slack variables y, g = ℓ(ℓ − 1) with
  ℓ = c − Σ s_j y_j − low and Σ s_j y_j ∈ [0, high − low − 1] (every integer reachable).

g is 0 on the satisfied states (with the right slack) and at least ``g_min`` on every other one.

Automatic weights (docs/conventions.md, "Constraints as penalties").  Let f be the caller's
objective without penalties, D_i = 2·|scale|·(|b_i| + Σ_j |K_ij|) the most one flip of variable i
can change f, and R = 2·|scale|·(Σ_{i<j} |K_ij| + Σ_i |b_i|) ≥ max f − min f.

- **flip rule**, for a count-like constraint (equal coefficients a) whose variables appear in no
  other constraint: a state that violates it by d units is d flips inside the set from a state that
  satisfies it, so f changes by at most d·max D_i, while the penalty is at least γ·d (γ = a² for an
  equality, 2 for a range); P > max_{i∈set} D_i / γ therefore makes every violated state worse than
  the repaired one, hence worse than the best feasible state.
- **range rule**, for every other constraint: P > R / g_min, so the penalty alone exceeds any
  difference of f; g_min = a² (count-like equality), 2 (range), or ρ² for a general sum, with ρ a
  step that divides every coefficient and the total (their gcd for integers, else their common
  binary step; found by enumeration for up to 20 variables otherwise).

P is the next multiple of the data's resolution above the bound (integer data keeps integer
weights), or the bound times 1 + 2⁻²⁰ when the data has none.  A weight passed by the caller is used
as given.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Hashable, Iterable, Mapping

import numpy as np

from spinward.core.canonical import CanonicalProblem, is_sparse
from spinward.core.errors import InputError

from .validate import check_dense_memory, check_number, check_total, dyadic_resolution

#: a penalised problem goes dense when its penalty entries would fill this share of n²
DENSE_FILL = 0.1
#: general sums over at most this many variables have their smallest residual found by enumeration
ENUMERATE_RESIDUALS = 20
#: weights beyond this multiple of the objective's range would swamp its precision
MAX_WEIGHT_RATIO = 2.0**40
#: the label of slack variable j of a constraint is (SLACK, name, j)
SLACK = "~slack"


@dataclass(eq=False)
class Constraint:
    """``low ≤ Σ a_i x_i ≤ high`` on the indicators of ``labels`` (see the module docstring).

    ``weight`` is the caller's penalty weight, or None for the automatic one.  ``penalty`` is the
    weight in use and ``rule`` says how it was derived; both are re-derived whenever the form's
    constraints change (adding a constraint that shares variables switches to the range rule).
    """

    name: str
    kind: str                      # "count", "one-of", "balance" or "sum"
    labels: tuple[Hashable, ...]
    index: np.ndarray              # base canonical indices of ``labels``
    coefficients: np.ndarray       # a_i
    low: float
    high: float
    weight: float | None = None
    step: float = 1.0              # every residual Σ a x − t is a multiple of this
    penalty: float = 0.0
    rule: str = ""
    slack: np.ndarray = field(default_factory=lambda: np.zeros(0))
    slack_start: int = 0

    @property
    def count_like(self) -> bool:
        """All coefficients equal: one flip moves the sum by exactly one unit."""
        return bool(np.all(self.coefficients == self.coefficients[0]))

    @property
    def is_range(self) -> bool:
        return self.high > self.low

    def per_flip(self) -> float:
        """γ: the least penalty per flip of violation (count-like constraints only)."""
        return 2.0 if self.is_range else float(self.coefficients[0]) ** 2

    def smallest_violation(self) -> float:
        """g_min: the least penalty of any violated state."""
        if self.is_range:
            return 2.0
        return float(self.coefficients[0]) ** 2 if self.count_like else self.step ** 2

    def sums(self, x: np.ndarray) -> float:
        return float(self.coefficients @ x[self.index])

    def satisfied(self, x: np.ndarray) -> bool:
        total = self.sums(x)
        slack = 1e-9 * max(1.0, float(np.abs(self.coefficients).sum()))
        return bool(self.low - slack <= total <= self.high + slack)

    def penalty_value(self, x: np.ndarray, y: np.ndarray) -> float:
        """g for indicators x (base variables) and y (this constraint's slack), before the weight."""
        residual = self.sums(x) - self.low
        if not self.is_range:
            return float(residual) ** 2
        residual -= float(self.slack @ y) if self.slack.size else 0.0
        return float(residual * (residual - 1.0))

    def best_slack(self, x: np.ndarray) -> np.ndarray:
        """Slack indicators that make the penalty 0 when ``x`` satisfies the constraint."""
        if not self.slack.size:
            return np.zeros(0, dtype=np.int8)
        target = int(min(max(round(self.sums(x) - self.low), 0), int(self.slack.sum())))
        return slack_bits(target, self.slack)


def slack_coefficients(width: int) -> np.ndarray:
    """s_j with Σ s_j y_j reaching every integer in [0, width] exactly (1, 2, 4, …, then the rest)."""
    if width <= 0:
        return np.zeros(0)
    m = width.bit_length()
    powers = [2.0**j for j in range(m - 1)]
    return np.array(powers + [float(width - (2 ** (m - 1) - 1))])


def slack_bits(value: int, coefficients: np.ndarray) -> np.ndarray:
    """Indicators y with Σ s_j y_j = value (the last, largest-remainder coefficient first)."""
    y = np.zeros(len(coefficients), dtype=np.int8)
    last = int(coefficients[-1])
    if value >= last:
        y[-1], value = 1, value - last
    for j in range(len(coefficients) - 2, -1, -1):
        if value >= int(coefficients[j]):
            y[j], value = 1, value - int(coefficients[j])
    return y


# --- building constraints from the caller's arguments ---------------------------------------------------------

def check_weight(weight: Any) -> float | None:
    if weight is None:
        return None
    value = check_number(weight, "weight")
    if value <= 0:
        raise InputError(f"a penalty weight must be positive, got {weight!r}; leave it out for the automatic one")
    return value


def resolve_labels(variables: Iterable[Hashable], index_of: Mapping[Hashable, int], what: str) -> tuple[tuple[Hashable, ...], np.ndarray]:
    """The caller's labels and their base indices; unknown or repeated labels are errors."""
    if isinstance(variables, (str, bytes)):
        raise InputError(f"{what}: give the variables as a list of labels, not the string {variables!r}")
    labels = tuple(variables)
    if not labels:
        raise InputError(f"{what}: the set of variables is empty")
    seen: set[Hashable] = set()
    for label in labels:
        try:
            if label not in index_of:
                raise InputError(f"{what}: {label!r} is not a variable of this problem")
        except TypeError:
            raise InputError(f"{what}: {label!r} is not a valid label (unhashable)") from None
        if label in seen:
            raise InputError(f"{what}: {label!r} is listed twice")
        seen.add(label)
    return labels, np.array([index_of[label] for label in labels], dtype=np.int64)


def count_range(count: Any, size: int, what: str) -> tuple[int, int]:
    """(low, high) from an int or a (low, high) pair, checked against the set's size."""
    pair = count if isinstance(count, (tuple, list)) else (count, count)
    if len(pair) != 2:
        raise InputError(f"{what}: count must be an int or a (low, high) pair, got {count!r}")
    bounds = []
    for v in pair:
        if isinstance(v, bool) or not isinstance(v, (int, np.integer)):
            raise InputError(f"{what}: count must be an int or a (low, high) pair of ints, got {count!r}")
        bounds.append(int(v))
    low, high = max(bounds[0], 0), min(bounds[1], size)
    if low > high:
        raise InputError(f"{what}: no assignment can have between {bounds[0]} and {bounds[1]} of {size} "
                         f"variables set; choose a count in 0..{size}")
    return low, high


def balance_range(size: int, tolerance: Any) -> tuple[int, int]:
    """Counts c of set variables with |(size − c) − c| ≤ tolerance (sides differ by one at odd size and 0)."""
    if isinstance(tolerance, bool) or not isinstance(tolerance, (int, np.integer)) or tolerance < 0:
        raise InputError(f"tolerance must be a non-negative int (the largest allowed difference between the two "
                         f"sides' sizes), got {tolerance!r}")
    low, high = math.ceil((size - tolerance) / 2), math.floor((size + tolerance) / 2)
    if low > high:  # tolerance 0 with an odd size: as equal as possible
        low, high = (size - 1) // 2, (size + 1) // 2
    return max(low, 0), min(high, size)


def residual_step(a: np.ndarray, total: float, what: str, needed: bool = True) -> float:
    """ρ: a positive step dividing every residual Σ a x − total (see the module docstring).

    When no step can be proved and none is ``needed`` (the caller gave the weight), the smallest
    |a_i| stands in: it only scales the violation that the repair step minimises.
    """
    if np.all(a == np.round(a)) and float(total) == round(total) and np.abs(a).max() < 2.0**53:
        g = 0
        for v in np.abs(a).astype(np.int64).tolist():
            g = math.gcd(g, v)
        if g and int(round(total)) % g:
            raise InputError(f"{what}: no assignment can make the sum {total!r}: every coefficient is a multiple "
                             f"of {g}, the total is not")
        return float(g)
    r = dyadic_resolution(a, total)
    if r is not None:
        return r
    if len(a) <= ENUMERATE_RESIDUALS:
        return _smallest_residual(a, total, what)
    if not needed:
        return float(np.abs(a).min())
    raise InputError(f"{what}: the coefficients share no common binary step, so no automatic weight can be proved "
                     f"for {len(a)} variables; scale them to integers or pass weight= explicitly")


def _smallest_residual(a: np.ndarray, total: float, what: str) -> float:
    """min |Σ a x − total| over the x with a non-zero residual, by enumeration (≤ 2²⁰ sums)."""
    sums = np.zeros(1)
    for v in a:
        sums = np.concatenate([sums, sums + v])
    residuals = np.abs(sums - total)
    tol = 1e-12 * max(1.0, float(np.abs(a).sum()) + abs(total))
    positive = residuals[residuals > tol]
    if positive.size == len(residuals):
        raise InputError(f"{what}: no assignment can make the sum {total!r} (closest: {float(positive.min()):.6g} away)")
    return float(positive.min()) if positive.size else 1.0


# --- weights ---------------------------------------------------------------------------------------------------

def flip_bounds(base: CanonicalProblem) -> np.ndarray:
    """D_i = 2·|scale|·(|b_i| + Σ_j |K_ij|): the most a flip of variable i changes the caller's objective.

    Computed once per base problem (kept in its ``meta``).
    """
    cached = base.meta.get("_flip_bounds")
    if cached is None:
        cached = _flip_bounds(base)
        base.meta["_flip_bounds"] = cached
    return cached


def _flip_bounds(base: CanonicalProblem) -> np.ndarray:
    if is_sparse(base.K):
        rows = np.asarray(abs(base.K).sum(axis=1)).ravel()
    else:
        rows = np.concatenate([np.abs(np.asarray(base.K[s:s + 512], dtype=np.float64)).sum(axis=1)
                               for s in range(0, base.n, 512)]) if base.n else np.zeros(0)
    return 2.0 * abs(base.scale) * (rows + np.abs(base.b))


def objective_range(base: CanonicalProblem, flips: np.ndarray) -> float:
    """R = 2·|scale|·(Σ_{i<j}|K_ij| + Σ|b_i|) ≥ max f − min f, from the flip bounds."""
    return float((flips.sum() + 2.0 * abs(base.scale) * np.abs(base.b).sum()) / 2.0)


def resolve_weights(constraints: list[Constraint], base: CanonicalProblem, resolution: float | None) -> None:
    """Set each constraint's ``penalty`` and ``rule`` (see the module docstring)."""
    if not constraints:
        return
    flips = flip_bounds(base)
    spread = objective_range(base, flips)
    uses = np.zeros(base.n, dtype=np.int64)
    for c in constraints:
        uses[c.index] += 1
    for c in constraints:
        if c.weight is not None:
            c.penalty, c.rule = c.weight, "given by the caller"
            continue
        if c.count_like and np.all(uses[c.index] == 1):
            bound = float(flips[c.index].max()) / c.per_flip()
            c.rule = f"flip rule: above max D_i / {c.per_flip():g} = {bound:.6g}"
        else:
            bound = spread / c.smallest_violation()
            c.rule = f"range rule: above R / {c.smallest_violation():.6g} = {bound:.6g}"
        if spread > 0 and bound > MAX_WEIGHT_RATIO * spread:
            raise InputError(f"constraint {c.name!r}: the automatic weight {bound:.3g} would swamp the objective's "
                             f"precision (its step {c.step:.3g} is tiny); scale the coefficients to integers or pass "
                             f"weight= explicitly")
        c.penalty = above(bound, resolution)


def above(bound: float, resolution: float | None) -> float:
    """The next multiple of ``resolution`` strictly above ``bound`` (or bound·(1 + 2⁻²⁰) without one)."""
    if resolution is not None and resolution > 0:
        return (math.floor(bound / resolution) + 1) * resolution
    return bound * (1.0 + 2.0**-20) if bound > 0 else 1.0


def penalty_resolution(constraints: list[Constraint]) -> float | None:
    """A binary step dividing every penalty coefficient (weight × products of a_i, s_j and the bounds)."""
    steps = [dyadic_resolution(np.array([c.penalty])) for c in constraints]
    terms = [dyadic_resolution(c.coefficients, np.array([c.low, c.high])) for c in constraints]
    if any(s is None for s in steps + terms):
        return None
    return min(float(s) * float(t) ** 2 for s, t in zip(steps, terms))  # type: ignore[arg-type]


# --- the penalised canonical problem ---------------------------------------------------------------------------

def spin_terms(c: Constraint, orientation: np.ndarray) -> tuple[np.ndarray, np.ndarray, float]:
    """(indices, u, v) with ℓ = uᵀσ_I + v for the constraint's residual ℓ = Σ α_k z_k − low.

    z_k = (1 + t_k σ_k)/2, t the indicator orientation of each base variable (+1 for slack).
    """
    idx = np.concatenate([c.index, c.slack_start + np.arange(c.slack.size)]).astype(np.int64)
    alpha = np.concatenate([c.coefficients, -c.slack])
    t = np.concatenate([orientation[c.index], np.ones(c.slack.size)])
    return idx, alpha * t / 2.0, float(alpha.sum() / 2.0 - c.low)


def penalised(base: CanonicalProblem, constraints: list[Constraint], labels: tuple[Hashable, ...],
              orientation: np.ndarray) -> CanonicalProblem:
    """``base`` with every constraint's penalty subtracted in canonical units (C' = C − G/|scale|)."""
    n, nb = len(labels), base.n
    terms = [spin_terms(c, orientation) for c in constraints]
    factors = [c.penalty / abs(base.scale) for c in constraints]
    b = np.zeros(n)
    b[:nb] = base.b
    k0 = base.k0
    for c, (idx, u, v), p in zip(constraints, terms, factors):
        b[idx] -= p * (2.0 * v * u - (u if c.is_range else 0.0))
        k0 -= p * (float(u @ u) + v * v - (v if c.is_range else 0.0))
    entries = sum(len(t[0]) ** 2 for t in terms)
    if not is_sparse(base.K) or entries >= DENSE_FILL * n * n:
        K = _dense_penalised(base, terms, factors, n)
    else:
        K = _sparse_penalised(base, terms, factors, n)
    check_total(float(np.abs(b).sum()) + abs(k0) + _abs_sum(K) / 2, "the penalised objective's coefficients")
    meta = {k: v for k, v in base.meta.items() if not str(k).startswith("_")}
    return CanonicalProblem(K=K, b=b, k0=float(k0), labels=labels, scale=base.scale, shift=base.shift,
                            sense=base.sense, form=base.form, meta=meta)


def _dense_penalised(base: CanonicalProblem, terms: list[Any], factors: list[float], n: int) -> np.ndarray:
    check_dense_memory(n, what="the penalised coupling matrix")
    K = np.zeros((n, n))
    nb = base.n
    if is_sparse(base.K):
        K[:nb, :nb] = base.K.toarray()
    else:
        K[:nb, :nb] = np.asarray(base.K, dtype=np.float64)
    for (idx, u, _), p in zip(terms, factors):
        K[np.ix_(idx, idx)] -= 2.0 * p * np.outer(u, u)
    np.fill_diagonal(K, 0.0)
    return K


def _sparse_penalised(base: CanonicalProblem, terms: list[Any], factors: list[float], n: int) -> Any:
    import scipy.sparse as sp

    coo = sp.coo_array(base.K)
    rows, cols, data = [coo.row.astype(np.int64)], [coo.col.astype(np.int64)], [np.asarray(coo.data, float)]
    for (idx, u, _), p in zip(terms, factors):
        r, c = np.meshgrid(idx, idx, indexing="ij")
        off = r != c
        rows.append(r[off])
        cols.append(c[off])
        data.append((-2.0 * p * np.outer(u, u))[off])
    K = sp.csr_array((np.concatenate(data), (np.concatenate(rows), np.concatenate(cols))), shape=(n, n))
    K.sum_duplicates()
    K.eliminate_zeros()
    return K


def _abs_sum(K: Any) -> float:
    return float(abs(K).sum()) if is_sparse(K) else float(np.abs(K).sum())


# --- reports ---------------------------------------------------------------------------------------------------

def report(c: Constraint, x: np.ndarray, values: tuple[int, int]) -> dict[str, Any]:
    """One constraint's status for indicators ``x``, in the caller's labels and values.

    ``values`` = (counted value, other value) of the form's domain.
    """
    total = c.sums(x)
    entry: dict[str, Any] = {"name": c.name, "kind": c.kind, "satisfied": c.satisfied(x),
                             "value": _plain(total), "target": _plain(c.low) if c.low == c.high
                             else [_plain(c.low), _plain(c.high)],
                             "weight": c.penalty, "weight_rule": c.rule}
    chosen = x[c.index] > 0
    if c.kind == "one-of":
        entry["chosen"] = [label for label, on in zip(c.labels, chosen) if on]
    if c.kind == "balance":
        counted, other = values
        entry["sizes"] = {other: int(len(chosen) - chosen.sum()), counted: int(chosen.sum())}
    return entry


def _plain(v: float) -> float | int:
    return int(v) if float(v).is_integer() and abs(v) < 2**53 else float(v)
