"""The README stays true: its Python example runs, its test command is the one CI runs, and its quick-start
plan command names a bundled scenario."""

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
README = (ROOT / "README.md").read_text(encoding="utf-8")


def test_python_example_runs(monkeypatch):
    monkeypatch.chdir(ROOT)
    block = re.search(r"```python\n(.*?)```", README, re.S).group(1)
    exec(compile(block, "README.md", "exec"), {})


def test_ci_runs_the_readme_test_command():
    commands = re.findall(r"```\n(python3 -m venv .*?)\n```", README)
    assert len(commands) == 2, "the README gives exactly two fresh-machine commands"
    test_cmd = commands[1].split("&& ", 2)[-1]  # after creating and activating the environment
    assert test_cmd in (ROOT / ".ci" / "run").read_text(encoding="utf-8")


def test_quick_start_uses_a_bundled_scenario():
    commands = re.findall(r"```\n(python3 -m venv .*?)\n```", README)
    scenario = re.search(r"backbone plan (\S+)", commands[0]).group(1)
    assert (ROOT / scenario).is_file()
