"""The README's constraint and sign-convention examples run as written and print what their comments say."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]


def blocks_under(heading: str) -> list[str]:
    """The ```python blocks of one README section."""
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text.split(heading, 1)[1].split("\n## ", 1)[0]
    return re.findall(r"```python\n(.*?)```", section, re.S)


def expected_prints(code: str) -> list[str]:
    """The comment after each print(...) line, or on the line after it."""
    lines = code.splitlines()
    out = []
    for k, line in enumerate(lines):
        if line.lstrip().startswith("print("):
            comment = line.split("#", 1)[1] if "#" in line else lines[k + 1].split("#", 1)[1]
            out.append(comment.strip())
    return out


def run_and_capture(code: str) -> list[str]:
    printed: list[str] = []
    namespace = {"print": lambda *args: printed.append(" ".join(str(a) for a in args))}
    exec(compile("import numpy as np\nimport spinward\n" + code, "README.md", "exec"), namespace)
    return printed


@pytest.mark.parametrize("index", [0, 1])  # the worked examples, then the demo's scenario
def test_constraint_examples_print_what_they_say(index):
    code = blocks_under("## Constraints")[index]
    assert run_and_capture(code) == expected_prints(code)


def test_sign_convention_example_gives_the_states_it_says():
    code = blocks_under("## Conventions")[0]
    namespace: dict = {}
    exec(compile("import spinward\n" + code, "README.md", "exec"), namespace)
    import spinward

    J, h = namespace["J"], namespace["h"]
    assert spinward.solve(spinward.Ising(J, h)).assignment == {"a": 1, "b": 1, "c": -1}
    r = spinward.solve(spinward.Ising(J, h, energy_sign="hardware"))
    assert r.assignment == {"a": -1, "b": 1, "c": 1} and r.objective == -2.5
