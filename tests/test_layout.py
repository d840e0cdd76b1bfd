"""The architecture's arrows, enforced by reading every import (docs/conventions.md, Layout).

face (spinward/*.py) → adapters, plugins → core.  Core imports neither adapters,
plugins nor the face; adapters and plugins never import each other or the face.
Also: no tracked symlinks, every package folder mapped in pyproject.toml, and no
citation of files that a clone of the repository does not have.
"""

from __future__ import annotations

import ast
import subprocess
import tomllib
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
LAYERS = {"core": {"core"}, "adapters": {"core", "adapters"}, "plugins": {"core", "plugins"}}


def _modules(folder: str):
    for path in sorted((ROOT / folder).rglob("*.py")):
        yield path, "spinward." + ".".join(path.relative_to(ROOT).with_suffix("").parts)


def _imports(path: Path, module: str):
    tree = ast.parse(path.read_text(encoding="utf-8"))
    package = module.rsplit(".", 1)[0] if path.name != "__init__.py" else module
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            yield from (a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - (node.level - 1)]
                yield ".".join(base + ([node.module] if node.module else []))
            else:
                yield node.module or ""


def _layer(name: str) -> str | None:
    parts = name.split(".")
    if parts[0] != "spinward":
        return None  # standard library or third party
    return parts[1] if len(parts) > 1 and parts[1] in LAYERS else "face"


@pytest.mark.parametrize("folder", sorted(LAYERS))
def test_arrows_point_one_way(folder):
    bad = []
    for path, module in _modules(folder):
        for name in _imports(path, module):
            layer = _layer(name)
            if layer is not None and layer not in LAYERS[folder]:
                bad.append(f"{path.relative_to(ROOT)} imports {name} ({folder} → {layer})")
    assert not bad, "\n".join(bad)


def _tracked() -> list[str]:
    out = subprocess.run(["git", "ls-files", "-s"], cwd=ROOT, capture_output=True, text=True)
    if out.returncode != 0:
        pytest.skip("not a git checkout")
    return out.stdout.splitlines()


def test_no_symlink_is_tracked():
    links = [line.split("\t", 1)[1] for line in _tracked() if line.startswith("120000")]
    assert not links, f"tracked symlinks break on checkouts without symlink support: {links}"


def test_every_package_folder_is_mapped_in_pyproject():
    config = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["tool"]["setuptools"]
    listed = set(config["packages"])
    mapping = {folder: package for package, folder in config["package-dir"].items()}
    found = set()
    for folder, package in mapping.items():
        for init in (ROOT / folder).rglob("__init__.py"):
            parts = init.parent.relative_to(ROOT / folder).parts
            found.add(".".join((package, *parts)))
    assert found == listed, f"missing from pyproject: {sorted(found - listed)}; stale there: {sorted(listed - found)}"


def test_no_tracked_file_outside_docs_cites_the_shared_folder():
    # The contributors' shared folder lies outside the repository: a clone has docs/ instead.
    needle = "shared" + "/"
    bad = []
    for line in _tracked():
        path = line.split("\t", 1)[1]
        if path.startswith("docs/") or path.endswith((".png", ".sqlite")):
            continue
        try:
            text = (ROOT / path).read_text(encoding="utf-8")
        except (UnicodeDecodeError, FileNotFoundError):
            continue
        if needle in text:
            bad.append(path)
    assert not bad, f"cite docs/ instead of the shared folder: {bad}"


def test_no_import_time_work_in_plugins():
    # numba is imported only by kernel modules, which plugins import lazily inside functions
    for path, module in _modules("plugins"):
        if path.name.startswith("_") and "kernel" in path.name:
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        top = [n for n in tree.body if isinstance(n, (ast.Import, ast.ImportFrom))]
        names = [a.name for n in top for a in n.names] + [getattr(n, "module", "") or "" for n in top]
        assert not any("numba" in x or "kernel" in x for x in names), f"{path} imports numba or kernels at import time"


def test_core_names_no_solver_and_holds_no_solver_constant():
    """Mean-field knowledge and solver names live in the plugins; core only knows the hooks."""
    import spinward

    names = spinward.default_registry().names()
    bad = []
    for path, _ in _modules("core"):
        text = path.read_text(encoding="utf-8")
        bad += [f"{path.name}: solver name {n!r}" for n in names if f'"{n}"' in text or f"'{n}'" in text]
        bad += [f"{path.name}: {word}" for word in ("0.763", "Parisi", "PARISI", "finite_size") if word in text]
    assert not bad, bad
