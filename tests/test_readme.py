"""The README's examples run as tests, so they cannot drift from the code."""

from __future__ import annotations

import re
import shlex
from pathlib import Path

import pytest

from powerspec.interfaces.cli import main

README = Path(__file__).resolve().parents[1] / "README.md"


def _blocks(lang: str) -> list[str]:
    text = README.read_text(encoding="utf-8")
    return re.findall(rf"```{lang}\n(.*?)```", text, flags=re.S)


def _commands() -> list[list[str]]:
    out = []
    for block in _blocks("shell"):
        for line in block.splitlines():
            line = line.split("  #")[0].strip()
            if line.startswith("powerspec "):
                out.append(shlex.split(line)[1:])
    return out


def test_readme_has_two_quick_start_commands():
    # the project's own contract: exactly two commands under "Quick start"
    section = README.read_text(encoding="utf-8").split("## Quick start", 1)[1].split("##", 1)[0]
    block = re.findall(r"```\n(.*?)```", section, flags=re.S)[0]
    assert len([ln for ln in block.splitlines() if ln.strip()]) == 2


@pytest.mark.timeout(240)
def test_readme_python_example_runs(capsys):
    blocks = _blocks("python")
    assert blocks
    for code in blocks:
        exec(compile(code, "README.md", "exec"), {})
    out = capsys.readouterr().out
    # source: C_10 eigenvalues 2cos(2 pi j/10) (textbook); the 6-torus's largest is 12 (once),
    # the next 10 + 2cos(pi/5) = 11.618... with multiplicity 2 * 6 = 12
    assert "[12." in out and "[1 12]" in out
    # source: the spectrum of K_2 (x) J_150 is {+-1} x {150, 0^149}: +-150 once, 0 with 298
    assert "(0.0, 298)" in out


@pytest.mark.timeout(240)
@pytest.mark.parametrize("argv", _commands(), ids=lambda a: " ".join(a)[:60])
def test_readme_shell_examples_run(argv, capsys):
    assert main(argv) == 0, capsys.readouterr().err
