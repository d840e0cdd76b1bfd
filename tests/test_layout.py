"""The architecture's arrows, enforced by reading every import (shared/CONVENTIONS.md, Layout).

face (spinward/*.py) → adapters, plugins → core.  Core imports neither adapters,
plugins nor the face; adapters and plugins never import each other or the face.
"""

from __future__ import annotations

import ast
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


def test_face_links_point_at_the_layers():
    for folder in LAYERS:
        link = ROOT / "spinward" / folder
        assert link.is_symlink() and link.resolve() == (ROOT / folder).resolve()


def test_no_import_time_work_in_plugins():
    # numba is imported only by kernel modules, which plugins import lazily inside functions
    for path, module in _modules("plugins"):
        if path.name.startswith("_") and "kernel" in path.name:
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        top = [n for n in tree.body if isinstance(n, (ast.Import, ast.ImportFrom))]
        names = [a.name for n in top for a in n.names] + [getattr(n, "module", "") or "" for n in top]
        assert not any("numba" in x or "kernel" in x for x in names), f"{path} imports numba or kernels at import time"
