"""An installed wheel imports from outside the repository, and a third-party plugin is discovered.

The wheel is built from this checkout; the plugin is a small package written
here that registers through the entry-point group ``spinward.solvers``.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]

PLUGIN_PYPROJECT = """
[build-system]
requires = ["setuptools>=68"]
build-backend = "setuptools.build_meta"
[project]
name = "spinward-plugin-allup"
version = "0.0.1"
[project.entry-points."spinward.solvers"]
allup = "allup_plugin"
"""

PLUGIN_MODULE = '''
"""A third-party solver: every spin up (a test plugin, deliberately trivial)."""
import numpy as np
from spinward import Capabilities, Solution, SolverSpec, hookimpl

def run(problem, ctx):
    return Solution(sigma=np.ones(problem.n, dtype=np.int8), info={"from": "third party"})

@hookimpl
def spinward_solvers():
    return [SolverSpec(name="allup", run=run, capabilities=Capabilities(stochastic=False),
                       summary="all spins up")]
'''

CHECK = """
import json, networkx as nx, spinward
r = spinward.solve(nx.petersen_graph())
t = spinward.solve(nx.path_graph(4), method="allup")
print(json.dumps({"file": spinward.__file__, "cut": r.objective, "exact": r.exact,
                  "solver": t.solver, "info": t.info.get("from"), "names": spinward.solvers()}))
"""


def _pip(*args: str) -> None:
    subprocess.run([sys.executable, "-m", "pip", "--disable-pip-version-check", "-q", *args], check=True,
                   capture_output=True, text=True)


@pytest.fixture(scope="module")
def installed(tmp_path_factory):
    base = tmp_path_factory.mktemp("installed")
    wheels, site = base / "wheels", base / "site"
    _pip("wheel", "--no-deps", "--no-build-isolation", "-w", str(wheels), str(ROOT))
    (base / "plugin").mkdir()
    (base / "plugin" / "pyproject.toml").write_text(PLUGIN_PYPROJECT)
    (base / "plugin" / "allup_plugin.py").write_text(PLUGIN_MODULE)
    wheel = next(wheels.glob("spinward-*.whl"))
    _pip("install", "--no-deps", "--no-build-isolation", "--target", str(site), str(wheel), str(base / "plugin"))
    return base, wheel, site


def test_wheel_contents(installed):
    _, wheel, _ = installed
    names = set(zipfile.ZipFile(wheel).namelist())
    for needed in ("spinward/__init__.py", "spinward/cli.py", "spinward/core/canonical.py",
                   "spinward/adapters/qubo.py", "spinward/adapters/files/dispatch.py",
                   "spinward/plugins/enumeration.py", "spinward/plugins/common/flips.py"):
        assert needed in names, f"{needed} missing from {wheel.name}"
    assert not any(n.startswith(("tests/", "examples/")) for n in names)
    entry = next(n for n in names if n.endswith("entry_points.txt"))
    assert "spinward = spinward.cli:main" in zipfile.ZipFile(wheel).read(entry).decode()


def test_installed_copy_imports_from_outside_the_repo_and_finds_plugin(installed):
    base, _, site = installed
    env = {k: v for k, v in os.environ.items() if k != "SPINWARD_NO_PLUGIN_AUTOLOAD"}
    env["PYTHONPATH"] = str(site)
    out = subprocess.run([sys.executable, "-c", textwrap.dedent(CHECK)], cwd=base, env=env, check=True,
                         capture_output=True, text=True).stdout
    got = json.loads(out.strip().splitlines()[-1])
    assert got["file"].startswith(str(site)), got["file"]
    assert got["cut"] == 12 and got["exact"] is True  # Petersen graph MaxCut = 12 (REFERENCES.md, from memory)
    assert got["solver"] == "allup" and got["info"] == "third party" and "allup" in got["names"]


def test_autoload_switch_hides_entry_points(installed):
    base, _, site = installed
    env = dict(os.environ, PYTHONPATH=str(site), SPINWARD_NO_PLUGIN_AUTOLOAD="1")
    code = "import spinward; print('allup' in spinward.solvers())"
    out = subprocess.run([sys.executable, "-c", code], cwd=base, env=env, check=True, capture_output=True,
                         text=True).stdout
    assert out.strip() == "False"
