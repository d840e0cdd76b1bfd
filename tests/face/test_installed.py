"""A built wheel, installed in a clean virtual environment, imports every module and runs the demo;
the README's two ways of adding a solver work as written.

The wheel is built from this checkout.  The clean environment has no spinward but
this wheel: its only link to the test environment is one ``.pth`` line naming the
test environment's site-packages for the third-party dependencies (numpy, scipy,
numba...), and a path named in a ``.pth`` file is added without processing the
``.pth`` files inside it, so the checkout's editable install stays invisible.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import sysconfig
import textwrap
import venv
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
PLUGIN_PACKAGE = ROOT / "examples" / "plugins" / "majority_plugin"
IN_PROCESS_EXAMPLE = ROOT / "examples" / "plugins" / "register_in_process.py"

IMPORT_ALL = """
import importlib, json, pkgutil, spinward
names = sorted(m.name for m in pkgutil.walk_packages(spinward.__path__, "spinward.")
               if not m.name.endswith("__main__"))  # running __main__ would start the CLI
for name in names:
    importlib.import_module(name)
print(json.dumps({"file": spinward.__file__, "modules": names}))
"""

PLUGIN_CHECK = """
import json, networkx as nx, spinward
r = spinward.solve(nx.petersen_graph())
t = spinward.solve(nx.petersen_graph(), method="majority", seed=3)
print(json.dumps({"cut": r.objective, "exact": r.exact, "solver": t.solver, "starts": t.info.get("starts"),
                  "plugin_cut": t.objective, "names": spinward.solvers()}))
"""


def _run(*args: str, **kwargs) -> subprocess.CompletedProcess:
    return subprocess.run(list(args), check=True, capture_output=True, text=True, **kwargs)


@pytest.fixture(scope="module")
def clean_env(tmp_path_factory):
    base = tmp_path_factory.mktemp("installed")
    wheels = base / "wheels"
    shutil.rmtree(ROOT / "build", ignore_errors=True)  # setuptools' staging folder keeps files deleted since
    pip = [sys.executable, "-m", "pip", "--disable-pip-version-check", "-q"]
    _run(*pip, "wheel", "--no-deps", "--no-build-isolation", "-w", str(wheels), str(ROOT), str(PLUGIN_PACKAGE))
    env_dir = base / "venv"
    venv.EnvBuilder(with_pip=False).create(env_dir)
    python = env_dir / "bin" / "python"
    site = Path(_run(str(python), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])").stdout.strip())
    (site / "dependencies.pth").write_text(sysconfig.get_paths()["purelib"] + "\n")
    _run(*pip, "--python", str(python), "install", "--no-deps", "--no-index",
         *map(str, sorted(wheels.glob("*.whl"))))
    env = {k: v for k, v in os.environ.items() if k not in ("SPINWARD_NO_PLUGIN_AUTOLOAD", "PYTHONPATH")}
    return base, next(wheels.glob("spinward-*.whl")), env_dir, env


def test_wheel_holds_every_package_and_no_tests(clean_env):
    _, wheel, _, _ = clean_env
    names = set(zipfile.ZipFile(wheel).namelist())
    for folder, package in (("core", "core"), ("adapters", "adapters"), ("plugins", "plugins"), ("spinward", "")):
        for path in (ROOT / folder).rglob("*.py"):
            inside = Path("spinward", package, path.relative_to(ROOT / folder)).as_posix()
            assert inside in names, f"{inside} missing from {wheel.name}"
    assert not any(n.startswith(("tests/", "examples/")) for n in names)
    entry = next(n for n in names if n.endswith("entry_points.txt"))
    assert "spinward = spinward.cli:main" in zipfile.ZipFile(wheel).read(entry).decode()


def test_clean_environment_imports_every_module_from_the_wheel(clean_env):
    base, _, env_dir, env = clean_env
    out = _run(str(env_dir / "bin" / "python"), "-c", textwrap.dedent(IMPORT_ALL), cwd=base, env=env).stdout
    got = json.loads(out.strip().splitlines()[-1])
    assert got["file"].startswith(str(env_dir)), got["file"]
    expected = {"spinward.core.frontdoor", "spinward.adapters.files.matrix_market", "spinward.plugins.iamp.parisi",
                "spinward.plugins.tabu._kernels", "spinward.bench.runner", "spinward.testing"}
    assert expected <= set(got["modules"])


def test_clean_environment_runs_the_demo(clean_env):
    base, _, env_dir, env = clean_env
    out = _run(str(env_dir / "bin" / "spinward"), "demo", cwd=base, env=env).stdout
    assert "Two-band frequency plan" in out and "proved optimal" in out


def test_entry_point_plugin_from_the_readme_is_found(clean_env):
    base, _, env_dir, env = clean_env
    out = _run(str(env_dir / "bin" / "python"), "-c", textwrap.dedent(PLUGIN_CHECK), cwd=base, env=env).stdout
    got = json.loads(out.strip().splitlines()[-1])
    assert got["cut"] == 12 and got["exact"] is True  # Petersen graph MaxCut = 12 (graph-theory folklore, from memory)
    assert got["solver"] == "majority" and got["starts"] == 8 and "majority" in got["names"]
    assert 0 < got["plugin_cut"] <= 12


def test_autoload_switch_hides_entry_points(clean_env):
    base, _, env_dir, env = clean_env
    code = "import spinward; print('majority' in spinward.solvers())"
    out = _run(str(env_dir / "bin" / "python"), "-c", code, cwd=base,
               env=dict(env, SPINWARD_NO_PLUGIN_AUTOLOAD="1")).stdout
    assert out.strip() == "False"


def test_in_process_registration_example_from_the_readme_runs():
    out = _run(sys.executable, str(IN_PROCESS_EXAMPLE), cwd=ROOT).stdout
    first = out.splitlines()[0]
    mine, proved = (float(part.split(":")[1].split()[0]) for part in first.split("   "))
    # The six-edge ring is even, hence bipartite: its MaxCut is the total weight 10.5 (elementary).
    assert proved == 10.5 and mine <= proved


def test_in_process_snippet_in_the_readme_runs():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    after = readme.split("**Inside one process**", 1)[1]
    code = after.split("```python", 1)[1].split("```", 1)[0]
    out = _run(sys.executable, "-c", code + "\nprint('ran', spinward.solvers()[-1])", cwd=ROOT).stdout
    assert out.strip().endswith("ran best-of-random")
