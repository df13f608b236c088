"""The README's two commands stay true: CI runs exactly its test command."""

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def fenced_commands(text):
    return [b.strip() for b in re.findall(r"```sh\n(.*?)```", text, re.S)]


def test_ci_runs_the_readme_test_command():
    readme = (ROOT / "README.md").read_text()
    blocks = fenced_commands(readme)
    assert blocks[0] == "pip install . && suitmap demo"
    test_cmd = blocks[1]
    ci = (ROOT / ".ci" / "run").read_text().splitlines()
    assert test_cmd in [ln.strip() for ln in ci], "edit .ci/run and README.md together"


def test_readme_states_the_caution():
    readme = (ROOT / "README.md").read_text()
    assert "screening-level" in readme and "plant-protection authority" in readme
