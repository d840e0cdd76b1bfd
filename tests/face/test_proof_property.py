"""Every ``exact=True`` is a true proof, whatever the ratio of couplings to fields (1 to 1e15).

Hypothesis draws Ising and QUBO instances whose couplings are 10^e times larger than their
fields (e uniform in [0, 15]), as integers or floats, ferromagnetic or of mixed sign, and
solves each with "auto" or a forced heuristic.  Whenever the result claims ``exact=True``,
the claim is checked against an outside reference computed in exact rational arithmetic:

- n ≤ 10: plain enumeration of every state, written here with Python integers (every
  float64 is m·2^k, so scaling by a common power of two makes all data integers);
- n = 30, ferromagnetic integer data: a minimum s–t cut from networkx (exact with integer
  capacities; the construction is the textbook one for ferromagnetic Ising models).

Comparison tolerance: 0 for integer data (every objective is an exact integer).  For float
data, the reported state may exceed the exact optimum by at most γ_m·M, with M the sum of the
absolute values of all coefficients, m the number of terms of the objective and
γ_m = m·u/(1 − m·u), u = 2^-53: the classical worst-case error of evaluating a sum of m terms
in binary64 (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., §4.2).  No
computation in float64 can separate two states closer than that, so no finer claim is made.
"""

from __future__ import annotations

import itertools
import os
import warnings
from fractions import Fraction

import networkx as nx
import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

import spinward

EXAMPLES = int(os.environ.get("SPINWARD_FUZZ_EXAMPLES", "12")) * 3
U = 2.0**-53
HEURISTICS = ("local", "spectral", "anneal", "tabu", "sdp")


def _as_integers(values: list[float]) -> tuple[list[int], int]:
    """Integers a_k and a power of two D with values[k] = a_k / D exactly."""
    fractions = [Fraction(v) for v in values]
    denominator = max((f.denominator for f in fractions), default=1)  # every denominator is a power of two
    return [int(f * denominator) for f in fractions], denominator


def _higham_tolerance(values: list[float], terms: int) -> float:
    gamma = terms * U / (1 - terms * U)
    return gamma * float(sum(abs(Fraction(v)) for v in values))


def _instance(data: st.DataObject, n: int) -> tuple[str, np.ndarray, np.ndarray, bool]:
    form = data.draw(st.sampled_from(["ising", "qubo"]), label="form")
    integer = data.draw(st.booleans(), label="integer data")
    exponent = data.draw(st.floats(0.0, 15.0), label="log10 coupling/field ratio")
    ferro = data.draw(st.booleans(), label="ferromagnetic")
    seed = data.draw(st.integers(0, 2**31), label="data seed")
    rng = np.random.default_rng(seed)
    if integer:
        couplings = rng.integers(1 if ferro else -3, 4, size=(n, n)) * int(round(10**exponent))
        fields = rng.integers(-3, 4, size=n).astype(np.float64)
        couplings = couplings.astype(np.float64)  # |value| ≤ 3e15 < 2**53: exact
    else:
        couplings = rng.normal(size=(n, n)) * 10**exponent
        couplings = np.abs(couplings) if ferro else couplings
        fields = rng.normal(size=n)
    couplings = np.triu(couplings, 1)
    if form == "qubo":  # QUBO: off-diagonal couplings, fields on the diagonal
        couplings = -couplings if ferro else couplings  # negative off-diagonal entries are the submodular case
        couplings[np.diag_indices(n)] = fields
    return form, couplings, fields, integer


def _exact_optimum(form: str, couplings: np.ndarray, fields: np.ndarray) -> tuple[Fraction, Fraction]:
    """(exact minimum, the exact objective function's scale) by enumeration in integers."""
    n = len(fields)
    if form == "qubo":
        entries = [(i, j, couplings[i, j]) for i in range(n) for j in range(n) if couplings[i, j] != 0]
        ints, d = _as_integers([float(q) for _, _, q in entries])
        best = min(sum(a for (i, j, _), a in zip(entries, ints) if x[i] and x[j])
                   for x in itertools.product((0, 1), repeat=n))
        return Fraction(best, d), Fraction(1, d)
    pairs = [(i, j, couplings[i, j]) for i in range(n) for j in range(i + 1, n) if couplings[i, j] != 0]
    ints, d = _as_integers([float(v) for _, _, v in pairs] + [float(h) for h in fields])
    J, h = ints[:len(pairs)], ints[len(pairs):]
    best = min(-sum(a * s[i] * s[j] for (i, j, _), a in zip(pairs, J)) - sum(b * si for b, si in zip(h, s))
               for s in itertools.product((-1, 1), repeat=n))
    return Fraction(best, d), Fraction(1, d)


def _exact_objective(form: str, couplings: np.ndarray, fields: np.ndarray, values: np.ndarray) -> Fraction:
    n = len(fields)
    if form == "qubo":
        return sum((Fraction(float(couplings[i, j])) for i in range(n) for j in range(n)
                    if values[i] and values[j]), Fraction(0))
    s = [int(v) for v in values]
    total = -sum((Fraction(float(couplings[i, j])) * s[i] * s[j] for i in range(n) for j in range(i + 1, n)),
                 Fraction(0))
    return total - sum((Fraction(float(fields[i])) * s[i] for i in range(n)), Fraction(0))


def _solve(form: str, couplings: np.ndarray, fields: np.ndarray, method: str, seed: int) -> spinward.Result:
    model = spinward.QUBO(couplings) if form == "qubo" else spinward.Ising(couplings, fields)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # forced methods warn about their assumptions; not the point here
        return spinward.solve(model, method=method, seed=seed)


@settings(max_examples=EXAMPLES, deadline=None)
@given(data=st.data(), n=st.integers(3, 10), method=st.sampled_from(("auto",) + HEURISTICS),
       seed=st.integers(0, 1000))
def test_every_exact_claim_matches_enumeration(data, n, method, seed):
    form, couplings, fields, integer = _instance(data, n)
    r = _solve(form, couplings, fields, method, seed)
    if not r.exact:
        return
    optimum, _ = _exact_optimum(form, couplings, fields)
    claimed = _exact_objective(form, couplings, fields, r.values)
    values = [float(v) for v in couplings[couplings != 0]] + [float(v) for v in fields]
    tolerance = 0.0 if integer else _higham_tolerance(values, n * (n + 1) // 2 + 1)
    assert claimed - optimum <= Fraction(tolerance), (form, method, float(claimed), float(optimum), tolerance)


def _ferro_min_energy(J: np.ndarray, h: np.ndarray) -> int:
    """min over s of −Σ_{i<j} J_ij s_i s_j − Σ h_i s_i for J ≥ 0, by a networkx minimum cut (integer data).

    With x_i = (1 + s_i)/2: −J s_i s_j = −J + 2J·[x_i ≠ x_j] and −h s = −h(2x − 1); node i on the
    source side means x_i = 1.  Each pair costs 2J when cut; a node costs 2h_i (h_i > 0) when it
    ends at x_i = 0, and 2|h_i| (h_i < 0) when it ends at x_i = 1.
    """
    n = len(h)
    g = nx.DiGraph()
    g.add_nodes_from(["s", "t", *range(n)])
    for i, j in zip(*np.nonzero(J)):
        g.add_edge(int(i), int(j), capacity=2 * int(J[i, j]))
        g.add_edge(int(j), int(i), capacity=2 * int(J[i, j]))
    for i, hi in enumerate(h.astype(np.int64).tolist()):
        if hi > 0:
            g.add_edge("s", i, capacity=2 * hi)
        elif hi < 0:
            g.add_edge(i, "t", capacity=-2 * hi)
    _, (source_side, _) = nx.minimum_cut(g, "s", "t")
    s = np.array([1 if i in source_side else -1 for i in range(n)], dtype=object)
    Ji = J.astype(np.int64).astype(object)
    return int(-(s @ Ji @ s) - h.astype(np.int64).astype(object) @ s)


@settings(max_examples=max(EXAMPLES // 3, 4), deadline=None)
@given(exponent=st.floats(0.0, 15.0), method=st.sampled_from(HEURISTICS[:4]), seed=st.integers(0, 1000),
       dense=st.booleans())
def test_ferromagnets_with_huge_couplings_and_unit_fields(exponent, method, seed, dense):
    """The reported case: n = 30, J = 10^e (up to 1e15) on the pairs, fields ±1 at random."""
    n = 30
    rng = np.random.default_rng(seed)
    scale = int(round(10**exponent))
    mask = np.triu(np.ones((n, n)) if dense else rng.random((n, n)) < 0.2, 1)
    J = (mask * scale).astype(np.float64)
    h = rng.choice([-1.0, 1.0], n)
    r = _solve("ising", J, h, method, seed)
    if r.exact:
        s = np.array(r.values, dtype=object)
        claimed = int(-(s @ J.astype(np.int64).astype(object) @ s) - h.astype(np.int64).astype(object) @ s)
        assert claimed == _ferro_min_energy(J, h), (method, exponent, claimed)
