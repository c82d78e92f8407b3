"""The README's two commands are the ones CI runs, and the README opens with the job."""

from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _readme_commands() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text.split("## Two commands", 1)[1].split("\n## ", 1)[0]
    return [c.strip() for c in re.findall(r"```\n(.+?)\n\s*```", section)]


def test_readme_has_exactly_two_commands() -> None:
    """The set-up section holds exactly two one-line commands."""
    commands = _readme_commands()
    assert 2 == len(commands)
    assert all("\n" not in c for c in commands)


def test_ci_runs_the_readme_test_command_verbatim() -> None:
    """.ci/run contains README command 2 to the letter."""
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert _readme_commands()[1] in ci.splitlines()


def test_readme_first_command_builds_the_demo() -> None:
    """Command 1 installs and builds a bundled starter spec that exists."""
    cmd = _readme_commands()[0]
    spec = cmd.rsplit(" ", 1)[1]
    assert "prismfab build" in cmd
    assert (ROOT / spec).is_file()


def test_readme_opens_with_the_job_and_names_the_safety_standards() -> None:
    """First paragraph states who uses prismfab and what it gives; safety cites the standards."""
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    first = text.split("\n\n")[1]
    assert "engineers" in first and "prism" in first
    assert "IEC 60825-1" in text and "ANSI Z136.1" in text
