"""When a certified bound proves a state optimal (docs/conventions.md, "When a bound proves optimality").

A certified bound B and an objective f (both in the caller's units) prove f optimal
when |B − f| is smaller than any real difference between two states' objectives:

- dyadic data (every coefficient a multiple of r = 2^-k; integers give r = 1) whose
  coefficient mass M satisfies M/r < 2^52, so every objective is computed exactly:
  |B − f| < r;
- otherwise: |B − f| ≤ τ = 8·(n + 2)·ε·M, the worst-case float error of evaluating an
  objective, and τ is below a quarter of the smallest non-zero coefficient, so that no
  single term can hide inside the tolerance.

M = |scale|·(Σ_{i<j}|K_ij| + Σ|b_i| + |k₀|) + |shift|, and ε = 2^-52.  A relative
tolerance is never used: with huge couplings and small fields it would hide the fields.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from .canonical import ROW_BLOCK, CanonicalProblem
from .model import ProblemForm

EPS = 2.0**-52
EXACT_MANTISSA = 2.0**52


def coefficient_mass(problem: CanonicalProblem) -> float:
    """M in the caller's units (see the module docstring), computed once per problem."""
    cached = problem.meta.get("_caller_mass")
    if cached is None:
        canonical = coupling_mass(problem) + float(np.abs(problem.b).sum()) + abs(problem.k0)
        cached = abs(problem.scale) * canonical + abs(problem.shift)
        problem.meta["_caller_mass"] = cached
    return cached


def coupling_mass(problem: CanonicalProblem) -> float:
    """Σ_{i<j} |K_ij| in canonical units, in row blocks (no n² temporary); inf for a LinearOperator."""
    cached = problem.meta.get("_abs_mass")
    if cached is None:
        if problem.kind == "sparse":
            cached = float(abs(problem.K).sum()) / 2
        elif problem.kind == "operator":
            cached = 0.0 if problem.n == 0 else math.inf
        else:
            cached = math.fsum(float(np.abs(problem.K[s:s + ROW_BLOCK]).sum())
                               for s in range(0, problem.n, ROW_BLOCK)) / 2
        problem.meta["_abs_mass"] = cached
    return cached


def float_tolerance(problem: CanonicalProblem) -> float:
    """τ: the worst-case float error of evaluating one objective (caller's units)."""
    return 8.0 * (problem.n + 2) * EPS * coefficient_mass(problem)


def smallest_coefficient(problem: CanonicalProblem) -> float:
    """The smallest non-zero |K_ij| or |b_i|, in the caller's units (inf when there is none)."""
    parts: list[float] = []
    if problem.kind == "sparse":
        data = np.abs(problem.K.data)
        parts.append(float(data[data > 0].min()) if np.any(data > 0) else math.inf)
    elif problem.kind == "dense":
        for s in range(0, problem.n, ROW_BLOCK):
            block = np.abs(np.asarray(problem.K[s:s + ROW_BLOCK], dtype=np.float64))
            if np.any(block > 0):
                parts.append(float(block[block > 0].min()))
    b = np.abs(problem.b)
    if np.any(b > 0):
        parts.append(float(b[b > 0].min()))
    return abs(problem.scale) * min(parts, default=math.inf)


def proves_optimal(form: ProblemForm, problem: CanonicalProblem, objective: float, bound: float) -> dict[str, Any]:
    """Whether a certified ``bound`` proves ``objective`` optimal, with the rule that decided it."""
    slack = abs(bound - objective)
    mass = coefficient_mass(problem)
    if slack < 1.0:  # a dyadic resolution is at most 1, so only then is it worth computing
        r = form.resolution()
        if r is not None and mass / r < EXACT_MANTISSA:
            return {"proved": slack < r, "rule": "resolution", "tolerance": r, "slack": slack}
    tau = float_tolerance(problem)
    proved = slack <= tau and tau <= 0.25 * smallest_coefficient(problem)
    return {"proved": bool(proved), "rule": "float error", "tolerance": tau, "slack": slack}
