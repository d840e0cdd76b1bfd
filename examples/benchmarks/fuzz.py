"""Fuzz benchmark: many small random solves, each checked against enumeration; every count must be 0.

Run: python examples/benchmarks/fuzz.py [--solves 10000] [--seed 0] [--out bench-out/fuzz.json]

Each solve draws a family, a size n ≤ 14 and a method ("auto" or a forced solver), solves
with ``spinward.solve`` and checks the result against plain enumeration of all 2ⁿ states,
written here from the caller's own coefficients (never through spinward's canonical form):

- false proof: ``exact=True`` but the state's objective is worse than the optimum;
- wrong-side bound: a bound above the minimum (QUBO, Ising) or below the maximum (MaxCut);
- objective mismatch: ``result.objective`` differs from the objective recomputed here from the
  input for the returned assignment;
- crash: any exception other than a forced solver declining the problem (SolverUnsuitableError:
  counted as "declined", and the instance is then solved with "auto", so every draw is a solve).

"proved optimal" counts the results with ``exact=True`` (by an exact method or by a bound).

Integer families whose coefficient mass M stays below 2⁵³ are checked exactly (Python integers,
no tolerance: every sum is exact in binary64).  Other families allow γ_m·M, the worst-case error
of summing the objective's m terms in binary64 (Higham, Accuracy and Stability of Numerical
Algorithms, §4.2), M the sum of the coefficients' magnitudes.
Families include tiny fields beside unit couplings, huge couplings beside unit fields (the
case that once made false proofs), and integers up to 2⁵⁰.  Invented instances, fixed seeds.
"""

from __future__ import annotations

import argparse
import itertools
import sys
import time
import traceback
import warnings
from collections import Counter, defaultdict
from pathlib import Path
from typing import Any, Callable

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import table, write_json  # noqa: E402

import spinward  # noqa: E402

U = 2.0**-53
METHODS = ("auto", "auto", "enumerate", "local", "spectral", "anneal", "tabu", "sdp", "mincut", "treedp",
           "unfrustrated", "iamp")


class Instance:
    """A problem as raw coefficients: Ising (J upper, h), QUBO (Q) or MaxCut (edges, weights)."""

    def __init__(self, form: str, integer: bool, **data: Any) -> None:
        self.form, self.integer, self.data = form, integer, data

    def model(self) -> Any:
        d = self.data
        if self.form == "ising":
            return spinward.Ising(d["J"], d["h"], offset=d.get("offset", 0))
        if self.form == "qubo":
            return spinward.QUBO(d["Q"], offset=d.get("offset", 0))
        n = d["n"]
        return spinward.MaxCut.from_edges(d["u"], d["v"], d["w"], n=n)

    @property
    def coefficients(self) -> np.ndarray:
        d = self.data
        parts = {"ising": ("J", "h"), "qubo": ("Q",), "maxcut": ("w",)}[self.form]
        return np.concatenate([np.ravel(d[k]) for k in parts] + [np.atleast_1d(d.get("offset", 0.0))])


def _spins(n: int) -> np.ndarray:
    return np.array(list(itertools.product((-1, 1), repeat=n)), dtype=np.int64).reshape(-1, n)


def all_objectives(inst: Instance) -> tuple[np.ndarray, np.ndarray]:
    """(states in the caller's domain, their objectives) for every state; int64 for integer data."""
    d = inst.data
    kind = np.int64 if inst.integer else np.float64
    if inst.form == "ising":
        S = _spins(len(d["h"]))
        J, h = d["J"].astype(kind), d["h"].astype(kind)
        return S, -np.einsum("ki,ij,kj->k", S, J, S) - S @ h + kind(d.get("offset", 0))
    if inst.form == "qubo":
        X = (_spins(d["Q"].shape[0]) + 1) // 2
        return X, np.einsum("ki,ij,kj->k", X, d["Q"].astype(kind), X) + kind(d.get("offset", 0))
    X = (_spins(d["n"]) + 1) // 2
    return X, ((X[:, d["u"]] != X[:, d["v"]]) * d["w"].astype(kind)).sum(axis=1)


def objective_of(inst: Instance, values: np.ndarray) -> Any:
    """The caller's objective for one state: exact Python integers for integer data."""
    d = inst.data
    x = np.asarray(values, dtype=np.int64)
    cast = (lambda a: np.asarray(a).astype(np.int64).astype(object)) if inst.integer else \
        (lambda a: np.asarray(a, dtype=np.float64))
    if inst.form == "ising":
        s = cast(x)
        return -(s @ cast(d["J"]) @ s) - cast(d["h"]) @ s + cast(d.get("offset", 0))
    if inst.form == "qubo":
        xs = cast(x)
        return xs @ cast(d["Q"]) @ xs + cast(d.get("offset", 0))
    return sum(cast(d["w"])[x[d["u"]] != x[d["v"]]].tolist(), cast(0))


# ---------------------------------------------------------------- families


def _ising(rng: np.random.Generator, n: int, couplings: Callable[..., Any], fields: Callable[..., Any],
           integer: bool, density: float = 1.0) -> Instance:
    J = np.triu(couplings(size=(n, n)) * (rng.random((n, n)) < density), 1)
    return Instance("ising", integer, J=J, h=fields(size=n))


def family_ising_int(rng, n):
    return _ising(rng, n, lambda size: rng.integers(-5, 6, size), lambda size: rng.integers(-3, 4, size), True)


def family_ising_float(rng, n):
    return _ising(rng, n, rng.normal, rng.normal, False, density=rng.uniform(0.2, 1.0))


def family_tiny_fields(rng, n):
    """Unit-scale couplings, fields 10^-k smaller (k up to 14)."""
    k = rng.uniform(3, 14)
    return _ising(rng, n, rng.normal, lambda size: rng.normal(size=size) * 10**-k, False)


def family_huge_couplings(rng, n):
    """Integer couplings 10^k (k up to 15) on every pair, unit fields: the false-proof case."""
    scale = int(10 ** rng.uniform(6, 15))
    ferro = rng.random() < 0.6
    couplings = (lambda size: np.full(size, scale)) if ferro else (lambda size: rng.choice([-scale, scale], size))
    return _ising(rng, n, couplings, lambda size: rng.choice([-1, 1], size), True)


def family_huge_integers(rng, n):
    """Integers up to 2^50: the coefficient mass may pass 2^53, where the resolution rule no longer applies."""
    top = 2 ** int(rng.integers(40, 51))
    Q = rng.integers(-top, top, size=(n, n)) * (rng.random((n, n)) < 0.5)
    return Instance("qubo", True, Q=Q, offset=int(rng.integers(-top, top)))


def family_qubo_int(rng, n):
    return Instance("qubo", True, Q=rng.integers(-9, 10, size=(n, n)), offset=int(rng.integers(-5, 6)))


def family_qubo_float(rng, n):
    Q = rng.normal(size=(n, n)) * (rng.random((n, n)) < rng.uniform(0.2, 1.0))
    return Instance("qubo", False, Q=Q, offset=float(rng.normal()))


def _edges(rng, n, p):
    u, v = np.triu_indices(n, 1)
    keep = rng.random(len(u)) < p
    return u[keep], v[keep]


def family_maxcut_int(rng, n):
    u, v = _edges(rng, n, rng.uniform(0.2, 0.9))
    return Instance("maxcut", True, n=n, u=u, v=v, w=rng.integers(-4, 10, size=len(u)))


def family_maxcut_decimal(rng, n):
    u, v = _edges(rng, n, rng.uniform(0.2, 0.9))
    return Instance("maxcut", False, n=n, u=u, v=v, w=np.round(rng.uniform(0, 10, size=len(u)), 2))


def family_ferro_tiny_fields(rng, n):
    """Ferromagnetic float couplings with fields 10^-k (mincut's home ground)."""
    k = rng.uniform(2, 12)
    return _ising(rng, n, lambda size: np.abs(rng.normal(size=size)), lambda size: rng.normal(size=size) * 10**-k,
                  False, density=0.5)


FAMILIES: dict[str, Callable[[np.random.Generator, int], Instance]] = {
    name[len("family_"):]: fn for name, fn in globals().items() if name.startswith("family_")}


# ---------------------------------------------------------------- checks


def tolerance(inst: Instance) -> float:
    """0 for integer data whose coefficient mass M is below 2⁵³ (every sum is exact); else γ_m·M."""
    coeffs = inst.coefficients
    mass = float(np.abs(coeffs).sum())
    if inst.integer and mass < 2.0**53:
        return 0.0
    m = coeffs.size + 1
    return m * U / (1 - m * U) * mass


def check(inst: Instance, result: spinward.Result, states: np.ndarray, objectives: np.ndarray) -> list[str]:
    """The names of the checks ``result`` fails."""
    tol = tolerance(inst)
    minimise = inst.form != "maxcut"
    best = objectives.min() if minimise else objectives.max()
    exact_value = objective_of(inst, result.values)
    failures = []
    worse = (exact_value - best) if minimise else (best - exact_value)
    if result.exact and worse > tol:
        failures.append("false proof")
    if (result.objective != exact_value) if tol == 0 else abs(result.objective - float(exact_value)) > tol:
        failures.append("objective mismatch")
    if result.bound is not None:
        beyond = (result.bound - float(best)) if minimise else (float(best) - result.bound)
        if beyond > tol + _ulp(float(best)):
            failures.append("wrong-side bound")
    return failures


def _ulp(x: float) -> float:
    return float(np.spacing(abs(x))) if x else 0.0


def one_solve(rng: np.random.Generator, k: int) -> tuple[str, str, list[str], str]:
    family = list(FAMILIES)[k % len(FAMILIES)]
    n = int(rng.integers(2, 15))
    inst = FAMILIES[family](rng, n)
    method = METHODS[int(rng.integers(len(METHODS)))]
    states, objectives = all_objectives(inst)
    outcomes = []
    seed = int(rng.integers(2**31))
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            try:
                result = spinward.solve(inst.model(), method=method, seed=seed)
            except spinward.SolverUnsuitableError:  # a forced solver that does not apply: solve with "auto"
                outcomes.append("declined")
                result = spinward.solve(inst.model(), method="auto", seed=seed)
    except Exception:  # noqa: BLE001 - every other exception is a crash, recorded with its traceback
        return family, method, outcomes + ["crash"], traceback.format_exc(limit=3)
    failures = check(inst, result, states, objectives)
    detail = "" if not failures else f"n={n} objective={result.objective!r} bound={result.bound!r} exact={result.exact}"
    return family, method, outcomes + (failures or ["ok"]) + (["proved optimal"] if result.exact else []), detail


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--solves", type=int, default=10_000)
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--out", default="bench-out/fuzz.json")
    args = parser.parse_args()
    rng = np.random.default_rng(args.seed)
    counts: Counter[str] = Counter()
    per_family: dict[str, Counter[str]] = defaultdict(Counter)
    examples: list[dict[str, Any]] = []
    t0 = time.perf_counter()
    for k in range(args.solves):
        family, method, outcomes, detail = one_solve(rng, k)
        for outcome in outcomes:
            counts[outcome] += 1
            per_family[family][outcome] += 1
        if detail and len(examples) < 20:
            examples.append({"solve": k, "family": family, "method": method, "outcomes": outcomes, "detail": detail})
        if (k + 1) % 1000 == 0:
            print(f"  {k + 1} solves, {time.perf_counter() - t0:.0f} s", flush=True)
    seconds = time.perf_counter() - t0
    kinds = ["ok", "proved optimal", "declined", "false proof", "wrong-side bound", "objective mismatch", "crash"]
    rows = [{"family": f, **{c: per_family[f][c] for c in kinds}} for f in FAMILIES]
    rows.append({"family": "all", **{c: counts[c] for c in kinds}})
    print(table(rows, ["family", *kinds]))
    print(f"\n{args.solves} solves in {seconds:.0f} s ({1000 * seconds / args.solves:.1f} ms each)")
    for e in examples:
        print(f"  solve {e['solve']} {e['family']} {e['method']}: {e['outcomes']} {e['detail']}")
    write_json(args.out, {"solves": args.solves, "seconds": seconds, "counts": dict(counts),
                          "per_family": {f: dict(c) for f, c in per_family.items()}, "examples": examples})
    failed = sum(counts[c] for c in kinds[3:])
    if failed:
        raise SystemExit(f"{failed} failures")


if __name__ == "__main__":
    main()
