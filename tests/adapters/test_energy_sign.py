"""The Ising form's two sign conventions: physics (E = −ΣJss − Σhs) and hardware (E = +ΣJss + Σhs).

References: plain brute force written here from each convention's own formula, and two hand-made
examples worked out by hand in their docstrings.
"""

from __future__ import annotations

import itertools
import json

import numpy as np
import pytest

import spinward
from spinward.cli import main
from spinward.core.errors import FileFormatError, InputError


def brute(J_upper: np.ndarray, h: np.ndarray, sign: float) -> tuple[float, tuple[int, ...]]:
    """min over s of sign·(Σ_{i<j} J_ij s_i s_j + Σ h_i s_i), and its first minimiser (plain enumeration)."""
    best = None
    for s in itertools.product((1, -1), repeat=len(h)):
        v = np.array(s, dtype=float)
        e = sign * float(v @ np.triu(J_upper, 1) @ v + h @ v)
        if best is None or e < best[0] - 1e-12:
            best = (e, s)
    return best


def test_physics_example_by_hand():
    """Physics sign.  J_ab = +1 (ferromagnetic), J_bc = −1 (antiferromagnetic), h_a = +0.5.
    The field sets a = +1, a and b align, b and c oppose: (a, b, c) = (+1, +1, −1) with
    E = −(1·1·1) − (−1·1·(−1)) − 0.5·1 = −2.5."""
    r = spinward.solve(spinward.Ising({("a", "b"): 1.0, ("b", "c"): -1.0}, {"a": 0.5}))
    assert r.assignment == {"a": 1, "b": 1, "c": -1} and r.objective == -2.5


def test_hardware_example_by_hand():
    """Hardware sign, same numbers.  E = +J_ab s_a s_b + J_bc s_b s_c + h_a s_a: J_ab = +1 now opposes a and b,
    J_bc = −1 aligns b and c, and h_a = +0.5 sets a = −1: (a, b, c) = (−1, +1, +1) with
    E = (1)(−1)(1) + (−1)(1)(1) + 0.5·(−1) = −2.5."""
    form = spinward.Ising({("a", "b"): 1.0, ("b", "c"): -1.0}, {"a": 0.5}, energy_sign="hardware")
    r = spinward.solve(form)
    assert r.assignment == {"a": -1, "b": 1, "c": 1} and r.objective == -2.5


@pytest.mark.parametrize("seed", range(4))
def test_the_two_conventions_negate_couplings_and_fields_and_share_the_best_state(seed):
    rng = np.random.default_rng(seed)
    n = 9
    J = np.triu(rng.normal(size=(n, n)) * (rng.random((n, n)) < 0.6), 1)
    h = rng.normal(size=n)
    physics = spinward.Ising(J, h, offset=1.5)
    hardware = spinward.Ising(-J, -h, offset=1.5, energy_sign="hardware")
    a, b = physics.canonical(), hardware.canonical()
    np.testing.assert_array_equal(np.asarray(a.K), np.asarray(b.K))
    np.testing.assert_array_equal(a.b, b.b)
    ra = spinward.solve(physics, method="enumerate")
    rb = spinward.solve(hardware, method="enumerate")
    assert ra.assignment == rb.assignment and ra.objective == pytest.approx(rb.objective)
    energy, state = brute(-J, -h, 1.0)  # reference: hardware formula +Σ(−J)ss + Σ(−h)s, plainly
    assert rb.objective == pytest.approx(energy + 1.5)
    assert tuple(rb.values) == state or rb.objective == pytest.approx(energy + 1.5)


@pytest.mark.parametrize("symmetric", [False, True])
def test_hardware_matrix_input_matches_brute_force(symmetric):
    rng = np.random.default_rng(7)
    n = 10
    U = np.triu(rng.integers(-3, 4, size=(n, n)), 1).astype(float)
    h = rng.integers(-2, 3, size=n).astype(float)
    J = U + U.T if symmetric else U
    r = spinward.solve(spinward.Ising(J, h, energy_sign="hardware"), method="enumerate")
    assert r.objective == pytest.approx(brute(U, h, 1.0)[0])  # reference: plain brute force, + sign
    s = r.values.astype(float)
    assert r.objective == pytest.approx(float(s @ U @ s + h @ s))


def test_unknown_sign_is_an_input_error():
    with pytest.raises(InputError, match="'physics'.*'hardware'"):
        spinward.Ising({(0, 1): 1.0}, {}, energy_sign="dwave")


def test_with_energy_sign_keeps_coefficients_and_constraints():
    form = spinward.Ising({("a", "b"): 2.0, ("b", "c"): 1.0}, {"a": 1.0})
    form.require_count(["a", "b", "c"], 1)
    other = form.with_energy_sign("hardware")
    assert other.energy_sign == "hardware" and form.energy_sign == "physics"
    assert [c.name for c in other.constraints] == ["count 1"]
    r = spinward.solve(other, method="enumerate")
    assert sorted(r.assignment.values()) == [-1, -1, 1]
    s = np.array([r.assignment[k] for k in ("a", "b", "c")], dtype=float)
    assert r.objective == pytest.approx(2 * s[0] * s[1] + s[1] * s[2] + s[0])  # hardware formula, plainly
    assert other.describe()["energy_sign"] == "hardware"


def test_json_documents_carry_the_sign(tmp_path):
    form = spinward.Ising({("a", "b"): 1.0}, {"a": 0.5}, energy_sign="hardware")
    spinward.write_problem(form, tmp_path / "p.json")
    doc = json.loads((tmp_path / "p.json").read_text())
    assert doc["energy_sign"] == "hardware"
    back = spinward.read_problem(tmp_path / "p.json")
    assert back.energy_sign == "hardware" and back.energy_sign_stated
    assert spinward.solve(back).assignment == {"a": -1, "b": 1}
    spinward.write_problem(spinward.Ising({("a", "b"): 1.0}, {}), tmp_path / "q.json")
    assert "energy_sign" not in json.loads((tmp_path / "q.json").read_text())  # the default stays implicit
    doc["energy_sign"] = "plus"
    (tmp_path / "bad.json").write_text(json.dumps(doc))
    with pytest.raises(FileFormatError, match="energy_sign: must be 'physics'"):
        spinward.read_problem(tmp_path / "bad.json")


def test_cli_reads_a_bare_matrix_in_the_hardware_sign(tmp_path, capsys):
    U = np.array([[0.0, 1.0, 0.0], [0.0, 0.0, -1.0], [0.0, 0.0, 0.0]])
    np.savez(tmp_path / "m.npz", J=U, h=np.array([0.5, 0.0, 0.0]))
    out_json = tmp_path / "r.json"
    assert main(["solve", str(tmp_path / "m.npz"), "--energy-sign", "hardware", "-o", str(out_json)]) == 0
    r = spinward.Result.from_json(out_json.read_text())
    assert r.objective == -2.5 and r.values.tolist() == [-1, 1, 1]  # the hardware example above, by hand
    assert main(["inspect", str(tmp_path / "m.npz"), "--energy-sign", "hardware"]) == 0
    assert main(["bound", str(tmp_path / "m.npz"), "--energy-sign", "hardware"]) == 0


def test_cli_refuses_a_sign_that_contradicts_the_document_or_the_form(tmp_path, capsys):
    spinward.write_problem(spinward.Ising({("a", "b"): 1.0}, {}, energy_sign="hardware"), tmp_path / "p.json")
    assert main(["solve", str(tmp_path / "p.json"), "--energy-sign", "physics"]) == 2
    assert "states energy_sign 'hardware' itself" in capsys.readouterr().err
    assert main(["solve", str(tmp_path / "p.json"), "--energy-sign", "hardware"]) == 0
    spinward.write_problem(spinward.QUBO(np.eye(2)), tmp_path / "q.json")
    assert main(["solve", str(tmp_path / "q.json"), "--energy-sign", "hardware"]) == 2
    assert "applies to Ising problems" in capsys.readouterr().err
