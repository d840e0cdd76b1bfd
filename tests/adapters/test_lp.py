"""The binary-quadratic subset of the plain-text LP format: read as a QUBO with equality constraints.

Reference: plain brute force over every binary assignment, with the objective and constraints
written out by hand from each file below.
"""

from __future__ import annotations

import itertools

import pytest

import spinward
from spinward.adapters.files.lp import read_lp
from spinward.core.errors import FileFormatError

SELECTION = r"""\ choose two of four projects: values and clashes (invented data)
Minimize
 obj: - 5 north - 4 south
      - 6 east - 3 west + [ 4 north * south + 6 south * east
      + 8 east * west ] / 2 + 1
Subject To
 two: north + south + east + west = 2
Bounds
 0 <= north <= 1
 west <= 1
Binaries
 north south east west
End
"""


def brute(objective, feasible, names):
    best = None
    for bits in itertools.product((0, 1), repeat=len(names)):
        x = dict(zip(names, bits))
        if feasible(x) and (best is None or objective(x) < best[0]):
            best = (objective(x), x)
    return best


def test_reads_objective_constraint_and_bounds_and_solves_like_brute_force(tmp_path):
    path = tmp_path / "pick.lp"
    path.write_text(SELECTION)
    form = read_lp(path)
    assert form.labels == ("north", "south", "east", "west")
    assert [c.name for c in form.constraints] == ["two"]
    r = spinward.solve(form, seed=0)

    def f(x):  # the file's objective, by hand: [q x*y]/2 is (q/2)·x·y
        return (-5 * x["north"] - 4 * x["south"] - 6 * x["east"] - 3 * x["west"] + 2 * x["north"] * x["south"]
                + 3 * x["south"] * x["east"] + 4 * x["east"] * x["west"] + 1)

    value, state = brute(f, lambda x: sum(x.values()) == 2, form.labels)
    assert r.objective == value == -10 and r.assignment == state and r.feasible


def test_maximisation_is_read_negated_with_a_note(tmp_path):
    path = tmp_path / "max.lp"
    path.write_text("MAXIMIZE\n 3 a + 2 b + [ -8 a * b - 2 c ^ 2 ] / 2\nsubject to\n c1: a + 2 b - c = 1\n"
                    "binary\n a b c\nend\n")
    with pytest.warns(spinward.InputWarning, match="maximisation"):
        form = read_lp(path)
    r = spinward.solve(form, seed=0)

    def f(x):
        return 3 * x["a"] + 2 * x["b"] - 4 * x["a"] * x["b"] - x["c"]

    best = max((f(dict(zip("abc", bits))), bits) for bits in itertools.product((0, 1), repeat=3)
               if bits[0] + 2 * bits[1] - bits[2] == 1)
    assert -r.objective == best[0] == 3  # by hand: a = 1 alone gives 3
    assert any("maximisation" in w for w in r.warnings)


@pytest.mark.parametrize("body, line, fragment", [
    ("Minimize\n x + y\nSubject To\n c: x + y <= 1\nBinary\n x y\nEnd\n", 4, "only equalities"),
    ("Minimize\n x + y\nSubject To\n c: x * y = 1\nBinary\n x y\nEnd\n", 4, "quadratic constraints"),
    ("Minimize\n x + y\nBinary\n x\nEnd\n", 2, "'y' is not declared in a Binary section"),
    ("Minimize\n x + y\nGeneral\n x\nEnd\n", 3, "general (integer) variables"),
    ("Minimize\n x\nBounds\n x <= 5\nBinary\n x\nEnd\n", 4, "only binary bounds"),
    ("Minimize\n x\nBounds\n x = 1\nBinary\n x\nEnd\n", 4, "fix="),
    ("Minimize\n [ x * y ]\nBinary\n x y\nEnd\n", 2, "[ … ] / 2"),
    ("Minimize\n x + * 3\nBinary\n x\nEnd\n", 2, "expected a term"),
    ("x + y\nMinimize\n x\nEnd\n", 1, "expected Minimize or Maximize"),
    ("Subject To\n x = 1\nEnd\n", 1, "must start with Minimize or Maximize"),
    ("Minimize\n x\nSubject To\n c: 2 x = 1\nBinary\n x\nEnd\n", 4, "no assignment can make the sum"),
    ("Minimize\n x\nSubject To\n c: x + 1 = 1\nBinary\n x\nEnd\n", 4, "constants on the right-hand side"),
])
def test_anything_else_is_refused_naming_the_line(tmp_path, body, line, fragment):
    path = tmp_path / "bad.lp"
    path.write_text(body)
    with pytest.raises(FileFormatError) as err:
        read_lp(path)
    assert f"bad.lp:{line}:" in str(err.value) and fragment in str(err.value)


def test_read_problem_and_the_cli_take_lp_files(tmp_path):
    path = tmp_path / "pick.lp"
    path.write_text("Minimize\n obj: - x - y + [ 4 x * y ] / 2\nSubject To\n c1: x + y = 1\nBinary\n x y\nEnd\n")
    form = spinward.read_problem(path)
    r = spinward.solve(form, method="enumerate")
    assert r.objective == -1.0 and r.feasible  # one of x, y: −1 (brute force by hand)
    from spinward.cli import main

    assert main(["solve", str(path), "--method", "enumerate"]) == 0
