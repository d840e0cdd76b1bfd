"""Bad calls into the Python API and bad command lines, each with its expected outcome (see corpus.py)."""

from __future__ import annotations

from typing import Any

import networkx as nx
import numpy as np
import scipy.sparse as sp

import spinward
from corpus import FILES, IE, RE, ApiCase, CliCase, err, ok

UE, SUE = "UnknownMethodError", "SolverUnsuitableError"
BIG = 2**53 + 1
Q2 = np.array([[1.0, -3.0], [0.0, 1.0]])  # minimum −1 at x = (1, 1)


def _solve(problem: Any, **kwargs: Any) -> spinward.Result:
    return spinward.solve(problem, seed=0, **kwargs)


def _graph(**attrs: Any) -> nx.Graph:
    g = nx.Graph()
    g.add_edge("a", "b", **attrs)
    return g


def _ising(J: Any = None, h: Any = None, **kw: Any) -> spinward.Ising:
    return spinward.Ising(np.zeros((2, 2)) if J is None else J, h, **kw)


def matrix_calls() -> list[ApiCase]:
    a = ApiCase
    return [
        a("np-matrix-qubo", lambda: _solve(np.matrix(Q2)), ok(-1.0)),
        a("np-matrix-form", lambda: _solve(spinward.QUBO(np.matrix(Q2))), ok(-1.0)),
        a("np-matrix-ising", lambda: _solve(spinward.Ising(np.matrix([[0.0, 1.0], [0.0, 0.0]]))), ok(-1.0)),  # aligned spins
        a("np-matrix-field", lambda: _solve(spinward.Ising(np.zeros((2, 2)), np.matrix([[1.0, 1.0]]))), err(IE, "h must have shape (2,)")),
        a("ragged", lambda: spinward.QUBO([[1, 2], [3]]), err(IE, "ragged")),
        a("string", lambda: _solve("Q.mtx"), err(IE, "cannot solve a str")),
        a("none", lambda: _solve(None), err(IE, "cannot solve a NoneType")),
        a("integer", lambda: _solve(5), err(IE, "cannot solve a int")),
        a("set", lambda: _solve({1, 2}), err(IE, "cannot solve a set")),
        a("cube", lambda: spinward.QUBO(np.zeros((2, 2, 2))), err(IE, "Q must be square, got shape (2, 2, 2)")),
        a("vector", lambda: spinward.QUBO(np.zeros(3)), err(IE, "got shape (3,)")),
        a("scalar", lambda: _solve(np.array(2.0)), err(IE, "got shape ()")),
        a("rectangle", lambda: spinward.Ising(np.zeros((2, 3))), err(IE, "J must be square, got shape (2, 3)")),
        a("complex", lambda: spinward.QUBO(np.eye(2, dtype=complex)), err(IE, "Q is complex")),
        a("object", lambda: spinward.QUBO(np.array([[1, "a"], [None, 2]], dtype=object)), err(IE, "object dtype")),
        a("strings", lambda: spinward.QUBO(np.array([["1", "2"], ["3", "4"]])), err(IE, "must be numeric, got dtype <U1")),
        a("nan-dense", lambda: spinward.QUBO(np.array([[0.0, np.nan], [0.0, 0.0]])), err(IE, "Q[0, 1] is nan")),
        a("inf-dense", lambda: spinward.Ising(np.array([[0.0, 0.0], [-np.inf, 0.0]])), err(IE, "J[1, 0] is -inf")),
        a("nan-late-row", lambda: spinward.QUBO(_late_nan(1500)), err(IE, "Q[1400, 3] is nan")),
        a("nan-sparse", lambda: spinward.QUBO(sp.csr_array(np.array([[0.0, np.nan], [0.0, 0.0]]))), err(IE, "Q[0, 1] is nan")),
        a("inf-from-duplicates", lambda: spinward.QUBO(sp.coo_array((np.array([1e308, 1e308]), ([0, 0], [1, 1])), shape=(2, 2))),
          err(IE, "Q[0, 1] is inf (after adding up duplicate entries")),
        a("int64-duplicates", lambda: spinward.QUBO(sp.coo_array((np.array([2**62, 2**62]), ([0, 0], [1, 1])), shape=(2, 2))),
          err(IE, "Q[0, 1] = 4611686018427387904 is beyond 2**53")),
        a("int32-duplicates", lambda: _solve(spinward.QUBO(sp.coo_array(
            (np.array([-(2**31) + 1] * 2, dtype=np.int32), ([0, 0], [1, 1])), shape=(2, 2)))), ok(-(2**32) + 2)),
        a("int64-minimum", lambda: spinward.QUBO(np.array([[0, -(2**63)], [0, 0]])), err(IE, "Q[0, 1] = -9223372036854775808")),
        a("beyond-int64-list", lambda: spinward.QUBO([[0, 2**64], [0, 0]]), err(IE, "Q[0, 1] = 18446744073709551616")),
        a("sparse-rectangle", lambda: spinward.QUBO(sp.csr_array((2, 3))), err(IE, "Q must be square, got shape (2, 3)")),
        a("sparse-complex", lambda: spinward.QUBO(sp.csr_array(np.eye(2, dtype=complex))), err(IE, "complex")),
        a("dense-200000", lambda: spinward.QUBO(np.broadcast_to(np.float64(1.0), (200_000, 200_000))),
          err(RE, "n = 200000 needs about")),
        a("huge-values", lambda: _solve(spinward.QUBO(np.full((3, 3), 1e308))), err(IE, "beyond float64 range")),
        a("bool-matrix", lambda: _solve(np.array([[True, False], [False, True]])), ok(0.0)),
        a("float16-matrix", lambda: _solve(Q2.astype(np.float16)), ok(-1.0)),
        a("empty-qubo", lambda: _solve(spinward.QUBO(np.zeros((0, 0)), offset=2.5)), ok(2.5)),
        a("empty-list", lambda: _solve([]), err(IE, "must be square, got shape (0,)")),
        a("one-variable", lambda: _solve(np.array([[-4.0]])), ok(-4.0)),
        a("asymmetric-J", lambda: spinward.Ising(np.array([[0.0, 1.0, 0.0], [0.0, 0.0, 1.0], [2.0, 0.0, 0.0]])),
          err(IE, "neither symmetric nor upper-triangular")),
        a("diagonal-J", lambda: _solve(spinward.Ising(np.diag([1.0, 2.0]))), ok(0.0, warns="diagonal")),
    ]


def _late_nan(n: int) -> np.ndarray:
    Q = np.zeros((n, n))
    Q[1400, 3] = np.nan
    return Q


def dict_and_field_calls() -> list[ApiCase]:
    a = ApiCase
    return [
        a("dict-key-not-pair", lambda: spinward.QUBO({1: 2.0}), err(IE, "QUBO dict keys must be pairs (i, j), got 1")),
        a("dict-key-triple", lambda: spinward.QUBO({(0, 1, 2): 2.0}), err(IE, "got (0, 1, 2)")),
        a("dict-value-string", lambda: spinward.QUBO({(0, 1): "2"}), err(IE, "Q[(0, 1)] must be a real number, got '2'")),
        a("dict-value-none", lambda: spinward.QUBO({(0, 1): None}), err(IE, "must be a real number, got None")),
        a("dict-value-complex", lambda: spinward.QUBO({(0, 1): 1j}), err(IE, "must be a real number, got 1j")),
        a("dict-value-nan", lambda: spinward.QUBO({(0, 1): float("nan")}), err(IE, "Q[(0, 1)] is nan")),
        a("dict-value-bool", lambda: spinward.QUBO({(0, 1): True}), err(IE, "must be a real number, got True")),
        a("dict-value-beyond", lambda: spinward.QUBO({(0, 1): BIG}), err(IE, "beyond 2**53")),
        a("dict-labels-given", lambda: spinward.QUBO({(0, 1): 1.0}, labels=["a", "b"]), err(IE, "labels cannot be given with a dict Q")),
        a("ising-dict-bad-key", lambda: spinward.Ising({"ab": 1.0}, {}), err(IE, "J dict keys must be pairs")),
        a("ising-dict-array-h", lambda: spinward.Ising({("a", "b"): 1.0}, [1.0, 2.0]), err(IE, "with a dict J, give h as a dict")),
        a("ising-field-string", lambda: spinward.Ising({}, {"s": "up"}), err(IE, "h['s'] must be a real number")),
        a("ising-field-beyond", lambda: spinward.Ising({}, {"s": -BIG}), err(IE, "h['s'] = -9007199254740993 is beyond 2**53")),
        a("ising-self-coupling", lambda: _solve(spinward.Ising({("a", "a"): 1.0, ("a", "b"): -1.0}, {})), ok(-1.0, warns="self-coupling")),
        a("h-wrong-length", lambda: _ising(h=[1.0]), err(IE, "h must have shape (2,), got (1,)")),
        a("h-2d", lambda: _ising(h=np.ones((2, 2))), err(IE, "h must have shape (2,), got (2, 2)")),
        a("h-string", lambda: _ising(h="up"), err(IE, "h must be numeric")),
        a("h-nan", lambda: _ising(h=[0.0, np.nan]), err(IE, "h[1] is nan")),
        a("h-dict-with-matrix", lambda: _ising(h={"a": 1.0}), err(IE, "object dtype")),
        a("h-beyond", lambda: _ising(h=np.array([0, BIG])), err(IE, "h[1] = 9007199254740993")),
        a("labels-count", lambda: spinward.QUBO(np.eye(2), labels=["a"]), err(IE, "QUBO: 1 labels for 2 variables")),
        a("labels-repeated", lambda: spinward.Ising(np.zeros((2, 2)), labels=["a", "a"]), err(IE, "labels must be distinct")),
        a("labels-unhashable", lambda: spinward.QUBO(np.eye(2), labels=[[1], [2]]), err(IE, "labels must be hashable")),
        a("offset-nan", lambda: spinward.QUBO(np.eye(2), offset=float("nan")), err(IE, "offset is nan")),
        a("offset-string", lambda: spinward.QUBO(np.eye(2), offset="1"), err(IE, "offset must be a real number, got '1'")),
        a("offset-bool", lambda: spinward.Ising(np.zeros((2, 2)), offset=True), err(IE, "offset must be a real number, got True")),
        a("offset-complex", lambda: spinward.QUBO(np.eye(2), offset=1 + 0j), err(IE, "offset must be a real number")),
        a("offset-beyond", lambda: spinward.QUBO(np.eye(2), offset=BIG), err(IE, "offset = 9007199254740993 is beyond 2**53")),
        a("offset-array", lambda: spinward.QUBO(np.eye(2), offset=np.ones(2)), err(IE, "offset must be a real number")),
    ]


def graph_calls() -> list[ApiCase]:
    a = ApiCase
    return [
        a("maxcut-not-graph", lambda: spinward.MaxCut([(0, 1)]), err(IE, "MaxCut needs a networkx graph, got list")),
        a("maxcut-digraph", lambda: spinward.MaxCut(nx.DiGraph([(0, 1)])), err(IE, "MaxCut needs an undirected graph")),
        a("maxcut-weight-string", lambda: spinward.MaxCut(_graph(weight="3")), err(IE, "weight of edge ('a', 'b') must be a real number")),
        a("maxcut-weight-nan", lambda: spinward.MaxCut(_graph(weight=float("nan"))), err(IE, "weight of edge ('a', 'b') is nan")),
        a("maxcut-weight-none", lambda: spinward.MaxCut(_graph(weight=None)), err(IE, "got None")),
        a("maxcut-weight-beyond", lambda: spinward.MaxCut(_graph(weight=-BIG)), err(IE, "-9007199254740993 is beyond 2**53")),
        a("maxcut-weight-name-int", lambda: spinward.MaxCut(_graph(), weight=5), err(IE, "weight must be the name of an edge attribute")),
        a("maxcut-other-attribute", lambda: _solve(_graph(capacity=4.0)), ok(1.0, warns="numeric 'capacity'")),
        a("maxcut-weight-by-name", lambda: _solve(spinward.MaxCut(_graph(capacity=4.0), weight="capacity")), ok(4.0)),
        a("maxcut-self-loop", lambda: _solve(nx.Graph([(0, 0), (0, 1)])), ok(1.0, warns="self-loop")),
        a("maxcut-empty", lambda: _solve(nx.Graph()), ok(0.0)),
        a("maxcut-parallel-beyond", lambda: spinward.MaxCut(nx.MultiGraph([(0, 1, {"weight": 2**52}), (0, 1, {"weight": 2**52 + 1})])),
          err(IE, "parallel edges between 0 and 1 add up to 2**53 or more")),
        a("edges-float-index", lambda: spinward.MaxCut.from_edges([0.5], [1]), err(IE, "heads must hold integer node indices")),
        a("edges-negative-index", lambda: spinward.MaxCut.from_edges([0], [-1]), err(IE, "tails holds the negative index -1")),
        a("edges-length-mismatch", lambda: spinward.MaxCut.from_edges([0, 1], [1]), err(IE, "same length, got 2 and 1")),
        a("edges-beyond-labels", lambda: spinward.MaxCut.from_edges([0], [5], labels=["a", "b"]), err(IE, "index 5, but there are only 2 nodes")),
        a("edges-weights-length", lambda: spinward.MaxCut.from_edges([0], [1], [1.0, 2.0]), err(IE, "weights must have shape (1,)")),
        a("edges-weights-nan", lambda: spinward.MaxCut.from_edges([0], [1], [np.nan]), err(IE, "weights[0] is nan")),
        a("edges-2d", lambda: spinward.MaxCut.from_edges([[0, 1]], [[1, 0]]), err(IE, "heads must be a 1-D array")),
        a("edges-labels-repeated", lambda: spinward.MaxCut.from_edges([0], [1], labels=["a", "a"]), err(IE, "labels must be distinct")),
        a("edges-ok", lambda: _solve(spinward.MaxCut.from_edges([0, 1, 2], [1, 2, 0], [1.0, 1.0, 1.0])), ok(2.0)),
    ]


def solve_calls() -> list[ApiCase]:
    a = ApiCase
    return [
        a("time-limit-negative", lambda: _solve(Q2, time_limit=-1), err(IE, "time_limit must be a positive number")),
        a("time-limit-zero", lambda: _solve(Q2, time_limit=0), err(IE, "time_limit must be a positive number")),
        a("time-limit-nan", lambda: _solve(Q2, time_limit=float("nan")), err(IE, "time_limit must be a positive")),
        a("time-limit-inf", lambda: _solve(Q2, time_limit=float("inf")), err(IE, "time_limit must be a positive")),
        a("time-limit-string", lambda: _solve(Q2, time_limit="5"), err(IE, "time_limit must be a positive")),
        a("time-limit-bool", lambda: _solve(Q2, time_limit=True), err(IE, "time_limit must be a positive")),
        a("method-unknown", lambda: _solve(Q2, method="nonesuch"), err(UE, "unknown method 'nonesuch'")),
        a("method-old-name", lambda: _solve(Q2, method="descent"), err(UE, "unknown method 'descent'")),
        a("method-number", lambda: _solve(Q2, method=5), err(IE, "method must be a solver name, 'auto', a SolverSpec or a callable, got 5")),
        a("method-unsuitable", lambda: _solve(spinward.Ising(np.array([[0, 1, -1], [0, 0, 1], [0, 0, 0]])), method="mincut"),
          err(SUE, "method 'mincut' cannot run on this problem")),
        a("read-path-none", lambda: spinward.read_problem(None), err(IE, "a file path is a string or a path-like object")),
        a("read-missing", lambda: spinward.read_problem("no/such/file.mtx"), err("FileFormatError", "no such file")),
        a("read-directory", lambda: spinward.read_problem("."), err("FileFormatError", "not a regular file")),
        a("read-form-unknown", lambda: spinward.read_problem("x.mtx", form="potts"), err(IE, "form must be one of qubo, ising, maxcut")),
        a("read-format-unknown", lambda: spinward.read_problem(FILES / "mtx/bom.mtx", format="xls"), err(IE, "unknown file format 'xls'")),
        a("read-weight-empty", lambda: spinward.read_problem("x.graphml", weight=""), err(IE, "weight must name an edge attribute")),
        a("write-unknown-suffix", lambda: spinward.write_problem(spinward.QUBO(Q2), "q.xlsx"), err("FileFormatError", "cannot write a qubo")),
        a("write-graph-as-mtx", lambda: spinward.write_problem(spinward.MaxCut(nx.path_graph(2)), "g.mtx"),
          err("FileFormatError", "cannot write a maxcut problem as '.mtx'")),
    ]


Q3 = np.array([[1.0, -3.0, 0.0], [0.0, 1.0, 2.0], [0.0, 0.0, -1.0]])


def _with(method: str = "auto", **options: Any) -> spinward.Result:
    return _solve(Q3, method=method, **options)


def option_calls() -> list[ApiCase]:
    """Typed solver options: an unknown name, a wrong type or a value out of range is an InputError."""
    a = ApiCase
    return [
        a("option-sweeps-negative", lambda: _with("anneal", sweeps=-5), err(IE, "anneal: option 'sweeps' = -5 is invalid")),
        a("option-sweeps-zero", lambda: _with("anneal", sweeps=0), err(IE, "greater than or equal to 1")),
        a("option-sweeps-float", lambda: _with("anneal", sweeps=2.5), err(IE, "option 'sweeps' = 2.5 is invalid")),
        a("option-sweeps-string", lambda: _with("anneal", sweeps="10"), err(IE, "option 'sweeps' = '10' is invalid")),
        a("option-sweeps-bool", lambda: _with("anneal", sweeps=True), err(IE, "option 'sweeps' = True is invalid")),
        a("option-unknown", lambda: _with("anneal", sweepz=10), err(IE, "unknown option 'sweepz'. Did you mean 'sweeps'?")),
        a("option-tenure-negative", lambda: _with("tabu", tenure=-1), err(IE, "tabu: option 'tenure' = -1 is invalid")),
        a("option-tenure-float", lambda: _with("tabu", tenure=2.7), err(IE, "option 'tenure' = 2.7 is invalid")),
        a("option-restarts-negative", lambda: _with("local", restarts=-1), err(IE, "local: option 'restarts' = -1")),
        a("option-rule", lambda: _with("anneal", rule="bogus"), err(IE, "option 'rule' = 'bogus' is invalid")),
        a("option-schedule", lambda: _with("anneal", schedule="bogus"), err(IE, "option 'schedule' = 'bogus'")),
        a("option-beta-span-order", lambda: _with("anneal", beta_span=(5, 1)), err(IE, "beta_span must be two numbers 0 < lo <= hi")),
        a("option-beta-span-nan", lambda: _with("anneal", beta_span=(float("nan"), 1)), err(IE, "should be a finite number")),
        a("option-hyperplanes-zero", lambda: _with("sdp", hyperplanes=0), err(IE, "sdp: option 'hyperplanes' = 0")),
        a("option-rank-zero", lambda: _with("sdp", rank=0), err(IE, "sdp: option 'rank' = 0")),
        a("option-tol-negative", lambda: _with("sdp", tol=-1.0), err(IE, "sdp: option 'tol' = -1.0")),
        a("option-delta-large", lambda: _with("iamp", delta=5.0), err(IE, "option 'delta' = 5.0 is invalid: input should be less than or equal to 0.5")),
        a("option-max-width-negative", lambda: _with("treedp", max_width=-1), err(IE, "treedp: option 'max_width' = -1")),
        a("option-max-levels-huge", lambda: _with("mincut", max_levels=10**30), err(IE, "mincut: option 'max_levels'")),
        a("bound-share-five", lambda: _with(bound_share=5), err(IE, "option 'bound_share' = 5 is invalid")),
        a("bound-share-negative", lambda: _with(bound_share=-1), err(IE, "option 'bound_share' = -1 is invalid")),
        a("bound-share-nan", lambda: _with(bound_share=float("nan")), err(IE, "should be a finite number")),
        a("bound-string", lambda: _with(bound="yes"), err(IE, "option 'bound' = 'yes' is invalid")),
        a("explain-string", lambda: _with(explain="x"), err(IE, "option 'explain' = 'x' is invalid")),
        a("solutions-zero", lambda: _with(solutions=0), err(IE, "option 'solutions' = 0 is invalid")),
        a("solutions-string", lambda: _with(solutions="3"), err(IE, "option 'solutions' = '3' is invalid")),
        a("initial-too-short", lambda: _with("tabu", initial=[1]), err(IE, "initial: expected 3 values")),
        a("initial-bad-value", lambda: _with("tabu", initial=[2, 2, 2]), err(IE, "initial: value 2 for 0 is not one of 0 and 1")),
        a("initial-bad-labels", lambda: _with("tabu", initial={"x": 1}), err(IE, "initial: no value for label 0")),
        a("fix-unknown-label", lambda: _with(fix={"zz": 1}), err(IE, "fix: unknown label 'zz'")),
        a("fix-bad-value", lambda: _with(fix={0: 5}), err(IE, "fix: value 5 for 0 is not one of 0 and 1")),
        a("solver-options-typo", lambda: _with(solver_options={"anneal": {"sweepz": 1}}), err(IE, "unknown option 'sweepz'")),
        a("candidates-unknown", lambda: _with(candidates=["nonesuch"]), err(UE, "unknown method 'nonesuch'")),
        # the minimum of Q3 is −1, at x = (1, 1, 0) and (0, 0, 1) (by hand over its 8 states)
        a("option-valid", lambda: _with("anneal", sweeps=200, restarts=2), ok(-1.0)),
    ]


def api_cases() -> list[ApiCase]:
    return matrix_calls() + dict_and_field_calls() + graph_calls() + solve_calls() + option_calls()


def cli_cases() -> list[CliCase]:
    c = CliCase
    f = "{files}"
    return [
        c("no-command", [], 2, "usage: spinward", where="stdout"),
        c("unknown-command", ["frobnicate"], 2, "invalid choice: 'frobnicate'"),
        c("solve-no-file", ["solve"], 2, "the following arguments are required: file"),
        c("solve-missing", ["solve", "missing.mtx"], 2, "missing.mtx: no such file"),
        c("solve-directory", ["solve", f], 2, "not a regular file"),
        c("time-limit-negative", ["solve", f"{f}/mtx/bom.mtx", "--time-limit", "-1"], 2, "time_limit must be a positive"),
        c("time-limit-word", ["solve", f"{f}/mtx/bom.mtx", "--time-limit", "soon"], 2, "invalid float value: 'soon'"),
        c("time-limit-nan", ["solve", f"{f}/mtx/bom.mtx", "--time-limit", "nan"], 2, "time_limit must be a positive"),
        c("seed-word", ["solve", f"{f}/mtx/bom.mtx", "--seed", "abc"], 2, "invalid int value: 'abc'"),
        c("method-unknown", ["solve", f"{f}/mtx/bom.mtx", "--method", "nonesuch"], 2, "unknown method 'nonesuch'"),
        c("method-unsuitable", ["solve", f"{f}/mtx/asymmetric_as_ising.mtx", "--method", "mincut", "--form", "qubo"], 2, "cannot run"),
        c("format-unknown", ["solve", f"{f}/mtx/bom.mtx", "--format", "xls"], 2, "argument --format: invalid choice: 'xls'"),
        c("format-wrong", ["solve", f"{f}/mtx/bom.mtx", "--format", "json"], 2, "malformed JSON"),
        c("format-csv", ["solve", f"{f}/edgelist/commas.txt", "--format", "csv"], 0, "objective: 2"),
        c("form-unknown", ["solve", f"{f}/mtx/bom.mtx", "--form", "potts"], 2, "argument --form: invalid choice"),
        c("weight-on-mtx", ["solve", f"{f}/mtx/bom.mtx", "--weight", "w"], 2, "weight='w' names an edge attribute"),
        c("weight-graphml", ["solve", f"{f}/graphml/other_attribute.graphml", "--weight", "capacity"], 0, "objective: 4"),
        c("option-no-equals", ["solve", f"{f}/mtx/bom.mtx", "--option", "sweeps"], 2, "must look like key=value"),
        c("option-nested", ["solve", f"{f}/mtx/bom.mtx", "--option", "x=" + "[" * 100_000], 2, "nests too deeply"),
        c("output-unwritable", ["solve", f"{f}/mtx/bom.mtx", "-o", "{tmp}/no/such/dir/r.json"], 2, "No such file or directory"),
        c("csv-to-directory", ["solve", f"{f}/mtx/bom.mtx", "--csv", "{tmp}"], 2, "Is a directory"),
        c("option-out-of-range", ["solve", f"{f}/mtx/bom.mtx", "--method", "anneal", "--option", "sweeps=-5"], 2,
          "option 'sweeps' = -5 is invalid"),
        c("option-wrong-type", ["solve", f"{f}/mtx/bom.mtx", "--method", "tabu", "--option", 'tenure="5"'], 2,
          "option 'tenure' = '5' is invalid"),
        c("option-typo", ["solve", f"{f}/mtx/bom.mtx", "--method", "anneal", "--option", "sweepz=10"], 2,
          "unknown option 'sweepz'. Did you mean 'sweeps'?"),
        c("option-bound-share", ["solve", f"{f}/mtx/bom.mtx", "--option", "bound_share=5"], 2, "'bound_share' = 5 is invalid"),
        c("option-initial-short", ["solve", f"{f}/mtx/bom.mtx", "--method", "tabu", "--option", "initial=[1]"], 2,
          "initial: expected 2 values"),
        c("bound-empty", ["bound", f"{f}/mtx/zero_by_zero.mtx"], 0, "no variables: the optimum is the offset, 0"),
        c("bound-empty-edges", ["bound", f"{f}/edgelist/empty.txt"], 0, "no variables"),
        c("bound-bad-file", ["bound", f"{f}/mtx/negative_size.mtx"], 2, "negative size"),
        c("bound-format", ["bound", f"{f}/edgelist/commas.txt", "--format", "csv"], 0, "upper bounds"),
        c("inspect-bad-file", ["inspect", f"{f}/json/deeply_nested.json"], 2, "nests too deeply"),
        c("inspect-empty", ["inspect", f"{f}/mtx/zero_by_zero.mtx"], 0, "n = 0"),
        c("inspect-weight", ["inspect", f"{f}/csv/weight_by_name.csv", "--weight", "cost"], 0, "maxcut, n = 3"),
    ]
