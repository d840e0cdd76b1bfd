"""Constraint helpers on the forms: penalties provably large enough, reports in the caller's labels, repair.

Outside references: plain brute force written here (n ≤ 18, every state, the caller's own objective and
the constraint's own definition), and scipy.optimize.milp with the constraints as linear constraints
(tests/references.py, mip_rel_gap = 0) at n ≤ 30.
"""

from __future__ import annotations

import itertools

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp

import spinward
from spinward.core.errors import InputError
from tests.references import ising_as_qubo, milp_maxcut, milp_qubo_min


# --- plain references ----------------------------------------------------------------------------------------

def qubo_value(Q: np.ndarray, x: np.ndarray) -> float:
    return float(x @ Q @ x)


def ising_value(J: np.ndarray, h: np.ndarray, s: np.ndarray) -> float:
    return float(-s @ np.triu(J, 1) @ s - h @ s)


def cut_value(edges: list[tuple[int, int, float]], side: np.ndarray) -> float:
    return float(sum(w for u, v, w in edges if side[u] != side[v]))


def all_states(form, n_total: int):
    """Every state of the penalised problem in the caller's domain (slack variables included)."""
    up, down = form.domain
    for bits in itertools.product((up, down), repeat=n_total):
        yield np.array(bits)


def check_penalty_is_exact(form, base_value, feasible) -> None:
    """Over every state: the penalised optimum is the constrained optimum, every violated state is strictly
    worse than it, and the penalised objective equals the canonical value (brute force, n_total ≤ 18)."""
    problem = form.canonical()
    assert problem.n <= 18
    better = (lambda a, b: a < b) if form.sense == "min" else (lambda a, b: a > b)
    best_feasible, best_penalised, violated = None, None, []
    for values in all_states(form, problem.n):
        base = values[: problem.n - sum(c.slack.size for c in form.constraints)]
        penalised = form.evaluate(values)
        assert penalised == pytest.approx(problem.to_objective(problem.value(form.encode(values))), abs=1e-7)
        if best_penalised is None or better(penalised, best_penalised):
            best_penalised = penalised
        if feasible(base):
            v = base_value(base)
            if best_feasible is None or better(v, best_feasible):
                best_feasible = v
        else:
            violated.append(penalised)
    assert best_penalised == pytest.approx(best_feasible, abs=1e-9)
    assert all(better(best_feasible, v) for v in violated)  # strictly worse, whatever the state


# --- the penalty is large enough (brute force) ---------------------------------------------------------------

@pytest.mark.parametrize("seed", range(3))
def test_qubo_exactly_k_brute_force(seed):
    rng = np.random.default_rng(seed)
    n = 12
    Q = rng.integers(-9, 10, size=(n, n)).astype(float)
    form = spinward.QUBO(Q)
    c = form.require_count(range(n), 4)
    assert "flip rule" in c.rule and c.penalty == int(c.penalty)  # integer data keeps an integer weight
    check_penalty_is_exact(form, lambda x: qubo_value(Q, x), lambda x: x.sum() == 4)


@pytest.mark.parametrize("seed", range(2))
def test_qubo_count_range_uses_slack_brute_force(seed):
    rng = np.random.default_rng(10 + seed)
    n = 12
    Q = rng.normal(size=(n, n))
    form = spinward.QUBO(Q)
    c = form.require_count(range(n), (3, 7))
    assert c.slack.tolist() == [1.0, 2.0]  # slack reaches 0..3, so ℓ(ℓ − 1) = 0 exactly for counts 3..7
    check_penalty_is_exact(form, lambda x: qubo_value(Q, x), lambda x: 3 <= x.sum() <= 7)


def test_ising_one_of_groups_brute_force():
    rng = np.random.default_rng(5)
    labels = [f"s{k}" for k in range(12)]
    J = {(a, b): float(rng.integers(-3, 4)) for a, b in itertools.combinations(labels, 2) if rng.random() < 0.4}
    h = {a: float(rng.integers(-2, 3)) for a in labels}
    form = spinward.Ising(J, h)
    groups = [labels[0:4], labels[4:8], labels[8:12]]
    made = form.require_one_of(*groups)
    assert [c.name for c in made] == ["one-of 1", "one-of 2", "one-of 3"]
    order = list(form.labels)
    Jm = np.zeros((12, 12))
    for (a, b), v in J.items():
        Jm[min(order.index(a), order.index(b)), max(order.index(a), order.index(b))] += v
    hv = np.array([h[a] for a in order])
    pos = [[order.index(a) for a in g] for g in groups]
    check_penalty_is_exact(form, lambda s: ising_value(Jm, hv, s),
                           lambda s: all(int((s[p] == 1).sum()) == 1 for p in pos))


@pytest.mark.parametrize("n, tolerance", [(12, 0), (11, 0), (12, 2), (13, 3)])
def test_maxcut_balance_brute_force(n, tolerance):
    g = nx.gnp_random_graph(n, 0.4, seed=n + tolerance)
    rng = np.random.default_rng(n)
    for u, v in g.edges:
        g[u][v]["weight"] = float(rng.integers(-2, 6))
    form = spinward.MaxCut(g)
    form.require_balance(tolerance)
    edges = [(u, v, d["weight"]) for u, v, d in g.edges(data=True)]
    check_penalty_is_exact(form, lambda side: cut_value(edges, side),
                           lambda side: abs(int((side == 0).sum()) - int((side == 1).sum())) <= max(tolerance, n % 2))


def test_general_sum_and_overlapping_constraints_use_the_range_rule_brute_force():
    rng = np.random.default_rng(8)
    n = 11
    Q = rng.integers(-5, 6, size=(n, n)).astype(float)
    form = spinward.QUBO(Q)
    a = {0: 3, 1: 5, 2: 2, 3: 4, 4: 1}
    s = form.require_sum(a, 7)
    c = form.require_count([4, 5, 6, 7, 8], 2)  # shares variable 4 with the sum
    assert "range rule" in s.rule and "range rule" in c.rule
    check_penalty_is_exact(form, lambda x: qubo_value(Q, x),
                           lambda x: sum(a[i] * x[i] for i in a) == 7 and x[4:9].sum() == 2)


def test_sum_with_fractional_coefficients_brute_force():
    rng = np.random.default_rng(9)
    n = 10
    Q = rng.normal(size=(n, n))
    form = spinward.QUBO(Q)
    coefficients = {i: [0.5, 1.25, 0.75, 1.5, 0.25, 1.0][i] for i in range(6)}
    c = form.require_sum(coefficients, 2.5)
    assert c.step == 0.25  # every residual is a multiple of the coefficients' common binary step
    check_penalty_is_exact(form, lambda x: qubo_value(Q, x),
                           lambda x: abs(sum(coefficients[i] * x[i] for i in coefficients) - 2.5) < 1e-12)


def test_flip_rule_weight_is_the_largest_flip_change_by_brute_force():
    """D_i from the coefficients equals the largest change a flip of x_i makes over all states (computed plainly)."""
    rng = np.random.default_rng(2)
    n = 8
    Q = rng.integers(-4, 5, size=(n, n)).astype(float)
    form = spinward.QUBO(Q)
    c = form.require_count([1, 3, 5], 1)
    worst = 0.0
    for bits in itertools.product((0, 1), repeat=n):
        x = np.array(bits, dtype=float)
        for i in (1, 3, 5):
            y = x.copy()
            y[i] = 1 - y[i]
            worst = max(worst, abs(qubo_value(Q, y) - qubo_value(Q, x)))
    assert c.penalty == worst + 1  # the next integer above max D_i (integer data)


# --- solved end to end against scipy.optimize.milp with linear constraints --------------------------------------

def test_qubo_exactly_k_matches_milp_n24():
    rng = np.random.default_rng(21)
    n = 24
    Q = (rng.integers(-10, 11, size=(n, n)) * (rng.random((n, n)) < 0.2)).astype(float)  # sparse: quick reference
    form = spinward.QUBO(Q)
    form.require_count(range(n), 7)
    r = spinward.solve(form, method="enumerate")
    reference = milp_qubo_min(Q, linear=[(np.ones(n), 7, 7)])  # reference: HiGHS, zero gap
    assert r.objective == pytest.approx(reference)
    assert sum(r.assignment.values()) == 7
    assert form.constraint_report(r.values)[0]["satisfied"]


def test_ising_one_of_groups_match_milp_n30():
    rng = np.random.default_rng(30)
    n = 30
    J = np.triu(rng.integers(-3, 4, size=(n, n)) * (rng.random((n, n)) < 0.15), 1).astype(float)
    h = rng.integers(-2, 3, size=n).astype(float)
    form = spinward.Ising(J, h)
    groups = [list(range(k, k + 5)) for k in range(0, n, 5)]
    form.require_one_of(*groups)
    r = spinward.solve(form, method="milp")
    Q, c = ising_as_qubo(J, h)
    rows = [(np.isin(np.arange(n), g).astype(float), 1, 1) for g in groups]
    assert r.objective == pytest.approx(milp_qubo_min(Q, c, linear=rows))  # reference: HiGHS, zero gap
    assert all(entry["satisfied"] for entry in form.constraint_report(r.values))


def test_maxcut_balance_with_tolerance_matches_milp_n24():
    g = nx.random_regular_graph(4, 24, seed=4)
    rng = np.random.default_rng(4)
    for u, v in g.edges:
        g[u][v]["weight"] = float(rng.integers(1, 6))
    form = spinward.MaxCut(g)
    form.require_balance(4)  # |side 0| − |side 1| within ±4: 10..14 nodes on side 1, two slack variables
    assert form.canonical().n == 26
    r = spinward.solve(form, method="enumerate")
    edges = [(u, v, d["weight"]) for u, v, d in g.edges(data=True)]
    reference = milp_maxcut(24, edges, linear=[(np.ones(24), 10, 14)])  # reference: HiGHS, zero gap
    assert r.objective == pytest.approx(reference)
    ones = sum(r.assignment[node] for node in g.nodes)
    assert 10 <= ones <= 14


def test_qubo_linear_equality_matches_milp_n20():
    rng = np.random.default_rng(20)
    n = 20
    Q = rng.integers(-6, 7, size=(n, n)).astype(float)
    a = rng.integers(1, 6, size=n).astype(float)
    form = spinward.QUBO(Q)
    form.require_sum(dict(enumerate(a)), 17)
    r = spinward.solve(form, method="enumerate")
    assert r.objective == pytest.approx(milp_qubo_min(Q, linear=[(a, 17, 17)]))  # reference: HiGHS
    assert a @ r.values == 17


# --- the caller's weight, reports, errors ------------------------------------------------------------------------

def test_a_weight_given_by_the_caller_is_honoured_and_can_lose():
    Q = np.array([[-5.0, 0.0], [0.0, -5.0]])  # both on is best without the constraint
    form = spinward.QUBO(Q)
    c = form.require_count([0, 1], 1, weight=0.5)
    assert c.penalty == 0.5 and c.rule == "given by the caller"
    assert form.evaluate(np.array([1, 1])) == -9.5  # by hand: −10 + 0.5·(2 − 1)² = −9.5 beats −5
    report = form.constraint_report(np.array([1, 1]))
    assert report[0]["satisfied"] is False and report[0]["value"] == 2
    r = spinward.solve(form, method="enumerate")
    primary, repair = r.info["plan"][1], r.info["plan"][-1]
    assert primary["value"] == -9.5  # the penalised optimum violates the constraint...
    assert repair["step"] == "repair" and r.feasible and r.objective == -5.0  # ...and the run path repairs it


def test_a_repaired_state_is_not_claimed_optimal_for_the_penalised_objective():
    form = spinward.QUBO(np.array([[-5.0, 0.0], [0.0, -5.0]]))
    form.require_count([0, 1], 1, weight=0.5)
    r = spinward.solve(form, method="enumerate")
    assert r.objective == -5.0 and not r.exact  # −9.5 at (1, 1) is better for the objective reported


def test_reports_use_the_callers_labels_and_values():
    g = nx.path_graph(["a", "b", "c", "d"])
    form = spinward.MaxCut(g)
    form.require_balance()
    form.require_one_of({"pick": ["a", "b"]})
    report = form.constraint_report(np.array([1, 0, 1, 0]))
    assert report[0]["name"] == "balance" and report[0]["sizes"] == {0: 2, 1: 2} and report[0]["satisfied"]
    assert report[1]["name"] == "pick" and report[1]["chosen"] == ["a"] and report[1]["satisfied"]


def test_ising_counts_spins_up():
    form = spinward.Ising({("p", "q"): 1.0, ("q", "r"): 1.0}, {})
    form.require_count(["p", "q", "r"], 1)
    r = spinward.solve(form, method="enumerate")
    assert sorted(r.assignment.values()) == [-1, -1, 1]


@pytest.mark.parametrize("call, message", [
    (lambda f: f.require_count(["nope"], 1), "'nope' is not a variable"),
    (lambda f: f.require_count([0, 0], 1), "listed twice"),
    (lambda f: f.require_count([0, 1], 3), "choose a count in 0..2"),
    (lambda f: f.require_count([0, 1], 1.5), "count must be an int"),
    (lambda f: f.require_count([], 0), "empty"),
    (lambda f: f.require_count("ab", 1), "not the string"),
    (lambda f: f.require_count([0, 1], 1, weight=0), "must be positive"),
    (lambda f: f.require_count([0, 1], 1, weight=float("nan")), "weight"),
    (lambda f: f.require_balance(-1), "non-negative int"),
    (lambda f: f.require_sum({0: 2, 1: 4}, 3), "multiple of 2"),
    (lambda f: f.require_sum({0: 0}, 0), "every coefficient is 0"),
    (lambda f: f.require_sum([1, 2], 3), "as a dict"),
    (lambda f: f.require_one_of(), "at least one group"),
    (lambda f: f.remove_constraint("x"), "no constraint is named"),
])
def test_bad_constraints_are_clear_input_errors(call, message):
    form = spinward.QUBO(np.eye(3))
    with pytest.raises(InputError, match=message):
        call(form)
    assert form.constraints == () and form.canonical().n == 3  # nothing half-added


def test_names_must_be_distinct_and_a_failed_group_adds_nothing():
    form = spinward.QUBO(np.eye(4))
    form.require_count([0, 1], 1, name="pair")
    with pytest.raises(InputError, match="exists already"):
        form.require_count([2, 3], 1, name="pair")
    with pytest.raises(InputError, match="not a variable"):
        form.require_one_of([0, 1], [2, 9])
    assert [c.name for c in form.constraints] == ["pair"]


def test_non_dyadic_sums_over_many_variables_need_a_weight():
    form = spinward.QUBO(np.eye(25))
    with pytest.raises(InputError, match="pass weight="):
        form.require_sum({i: 0.1 * (i + 1) for i in range(25)}, 1.0)
    c = form.require_sum({i: 0.1 * (i + 1) for i in range(25)}, 1.0, weight=100.0)
    assert c.penalty == 100.0


# --- in place, cached, sparse ------------------------------------------------------------------------------------

def test_helpers_extend_the_form_in_place_and_rebuild_its_canonical_problem():
    Q = np.diag([-1.0, -1.0, -1.0])
    form = spinward.QUBO(Q)
    before = form.canonical()
    assert spinward.solve(form, method="enumerate").objective == -3.0
    c = form.require_count([0, 1, 2], 1)
    after = form.canonical()
    assert after is not before and form.constraints == (c,)
    assert spinward.solve(form, method="enumerate").objective == -1.0
    form.remove_constraint(c.name)
    assert spinward.solve(form, method="enumerate").objective == -3.0
    assert "constraints" not in repr(form)


def test_weights_are_rederived_when_constraints_start_to_share_variables():
    form = spinward.QUBO(np.ones((4, 4)))
    first = form.require_count([0, 1], 1)
    assert "flip rule" in first.rule
    form.require_count([1, 2], 1)
    assert "range rule" in first.rule


def test_small_groups_on_a_sparse_problem_stay_sparse():
    n = 400
    g = nx.random_regular_graph(3, n, seed=1)
    form = spinward.MaxCut(g)
    form.require_one_of(*[list(range(k, k + 4)) for k in range(0, n, 4)])
    assert form.canonical().kind == "sparse"
    form.require_balance()
    assert form.canonical().kind == "dense"  # the balance penalty couples every pair


def test_integer_data_keeps_an_integer_resolution_so_bounds_can_prove():
    Q = np.array([[2.0, -3.0, 1.0], [0.0, -1.0, 2.0], [0.0, 0.0, 1.0]])
    form = spinward.QUBO(Q)
    form.require_count([0, 1, 2], 2)
    assert form.resolution() == 1.0


# --- repair ------------------------------------------------------------------------------------------------------

def test_repair_moves_to_a_nearest_feasible_state_then_improves_by_swaps():
    rng = np.random.default_rng(3)
    n = 14
    Q = rng.integers(-9, 10, size=(n, n)).astype(float)
    form = spinward.QUBO(Q)
    form.require_count(range(n), 5)
    x = np.zeros(n, dtype=int)
    x[:9] = 1  # 4 too many
    state, info = form.repair_with_report(form.encode(x))
    y = form.decode(state)
    assert y.sum() == 5 and info["flips_to_feasible"] == 4 and not info["feasible_before"]
    assert info["objective_after"] == pytest.approx(qubo_value(Q, y.astype(float)))  # penalty 0 when feasible
    assert info["objective_after"] <= info["objective_before"]
    for i, j in itertools.product(range(n), repeat=2):  # no feasible swap improves (checked plainly)
        if y[i] == 1 and y[j] == 0:
            z = y.astype(float)
            z[i], z[j] = 0, 1
            assert qubo_value(Q, z) >= qubo_value(Q, y.astype(float)) - 1e-9


def test_repair_sets_slack_and_balances_a_cut():
    g = nx.random_regular_graph(3, 16, seed=2)
    form = spinward.MaxCut(g)
    form.require_balance(2)
    state, info = form.repair_with_report(np.ones(form.canonical().n, dtype=np.int8))
    side = form.decode(state)
    ones = int(side[:16].sum())
    assert 7 <= ones <= 9 and info["flips_to_feasible"] == 7
    edges = [(u, v, 1.0) for u, v in g.edges]
    assert form.evaluate(side) == pytest.approx(cut_value(edges, side[:16]))  # slack leaves no penalty


def test_repair_gives_up_when_flips_cannot_reach_a_general_sum():
    form = spinward.QUBO(np.zeros((3, 3)))
    form.require_sum({0: 3, 1: 5, 2: 7}, 8)
    assert form.repair(form.encode(np.array([0, 0, 1])), lambda: False) is None  # 7: every flip moves away
    assert form.repair(form.encode(np.array([1, 1, 0])), lambda: False) is not None


def test_repair_honours_should_stop_and_keeps_feasibility():
    rng = np.random.default_rng(4)
    Q = rng.normal(size=(20, 20))
    form = spinward.QUBO(Q)
    form.require_one_of(*[list(range(k, k + 4)) for k in range(0, 20, 4)])
    state, info = form.repair_with_report(np.ones(20, dtype=np.int8), should_stop=lambda: True)
    assert info["improving_moves"] == 0
    assert all(e["satisfied"] for e in form.constraint_report(form.decode(state)))


def test_forms_without_constraints_report_and_repair_nothing():
    form = spinward.QUBO(np.eye(2))
    assert form.constraint_report(np.array([0, 1])) is None
    assert form.repair(np.ones(2, dtype=np.int8), lambda: False) is None


def test_sparse_qubo_with_a_count_repairs_and_matches_brute_force():
    rng = np.random.default_rng(6)
    n = 12
    Q = sp.random_array((n, n), density=0.3, random_state=6, format="csr")
    Q.data = np.round(Q.data * 10) - 5
    form = spinward.QUBO(Q)
    form.require_count(range(n), 3)
    dense = Q.toarray()
    check_penalty_is_exact(form, lambda x: qubo_value(dense, x), lambda x: x.sum() == 3)
    state, _ = form.repair_with_report(form.encode(rng.integers(0, 2, size=n)))
    assert form.decode(state).sum() == 3


# --- through spinward.solve ----------------------------------------------------------------------------------------

def test_solve_reports_feasibility_in_the_result_and_its_summary():
    g = nx.random_regular_graph(3, 30, seed=5)
    form = spinward.MaxCut(g)
    form.require_balance(2)
    r = spinward.solve(form, seed=0)
    assert r.feasible is True and r.constraints[0]["name"] == "balance" and r.constraints[0]["satisfied"]
    ones = sum(r.assignment[node] for node in g.nodes)
    assert 14 <= ones <= 16  # sides of 14..16 nodes: |difference| ≤ 2
    assert "constraints: all 1 satisfied" in r.summary()
    back = spinward.Result.from_json(r.to_json())
    assert back.feasible and back.constraints[0]["satisfied"]


def test_an_infeasible_best_state_is_flagged_warned_and_shown():
    Q = np.diag([0.0, 0.0, -10.0])  # x = (0, 0, 1) is best; the sum needs 3 + 5
    form = spinward.QUBO(Q)
    form.require_sum({0: 3, 1: 5, 2: 7}, 8, weight=0.01, name="budget")
    r = spinward.solve(form, method="enumerate")
    assert r.values.tolist() == [0, 0, 1]  # by hand: −10 + 0.01·(7 − 8)² = −9.99; (1, 1, 0) gives 0
    assert r.feasible is False and r.constraints[0]["value"] == 7
    assert any("violates a constraint: budget" in w for w in r.warnings)
    assert "1 of 1 VIOLATED: budget (value 7, target 8)" in r.summary()


def test_warm_starts_and_fixed_values_in_the_callers_own_variables_with_slack():
    g = nx.random_regular_graph(3, 20, seed=6)
    form = spinward.MaxCut(g)
    form.require_balance(4)
    assert form.canonical().n > 20  # slack variables
    start = {node: int(node < 10) for node in g.nodes}
    r = spinward.solve(form, method="tabu", initial=start, seed=1)
    assert r.feasible
    again = spinward.solve(form, method="tabu", initial=r, seed=1)
    assert again.objective >= r.objective - 1e-9
    with pytest.raises(InputError, match="no value for label"):
        spinward.solve(form, method="tabu", initial={0: 1}, seed=1)


def test_repair_reaches_a_permutation_when_rows_and_columns_overlap():
    rng = np.random.default_rng(9)
    cells = [(i, j) for i in range(5) for j in range(5)]
    form = spinward.QUBO({(c, c): float(rng.integers(1, 9)) for c in cells})
    form.require_one_of(*[[(i, j) for j in range(5)] for i in range(5)])
    form.require_one_of(*[[(i, j) for i in range(5)] for j in range(5)])
    state, info = form.repair_with_report(-np.ones(25, dtype=np.int8))  # nothing chosen
    chosen = np.array(form.decode(state)).reshape(5, 5)
    assert (chosen.sum(axis=0) == 1).all() and (chosen.sum(axis=1) == 1).all()  # a permutation matrix
    assert info["flips_to_feasible"] == 5  # each flip fills one row and one column


def test_slack_variables_stay_out_of_the_result():
    """A count range adds slack variables of the form's own: the result shows the caller's variables only."""
    rng = np.random.default_rng(8)
    labels = [f"x{k}" for k in range(10)]
    form = spinward.QUBO({(a, b): float(rng.normal()) for a in labels for b in labels})
    form.require_count(labels, (3, 7))
    assert form.canonical().n > 10
    r = spinward.solve(form, seed=0, solutions=3)
    assert list(r.assignment) == labels and len(r.array) == 10
    assert all(list(answer.assignment) == labels for answer in r.solutions)
    with pytest.raises(spinward.InputError, match="unknown label"):
        spinward.solve(form, fix={("~slack", "count", 0): 1})
