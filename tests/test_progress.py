"""Progress bars: drawn on a terminal only, silent with --quiet or a pipe, fed by the planner."""

from __future__ import annotations

import io

import pytest

from powerspec.interfaces import progress as progress_module
from powerspec.interfaces.cli import main
from powerspec.interfaces.progress import progress_bar, wants_bar
from powerspec.queries import planner


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_silent_unless_a_terminal():
    assert not wants_bar(False, io.StringIO())
    assert wants_bar(False, _Terminal())
    assert not wants_bar(True, _Terminal())  # --quiet
    with progress_bar("blocks", stream=io.StringIO()) as report:
        assert report is None


def test_bar_counts_on_a_terminal():
    stream = _Terminal()
    with progress_bar("symmetry blocks", stream=stream, delay=0) as report:
        assert report is not None
        report(1, 4)
        report(4, 4)
        assert report.bar.n == 4 and report.bar.total == 4
    text = stream.getvalue()
    # the bar shows its label and total, and is wiped when the block ends (leave=False)
    assert "symmetry blocks" in text and "/4" in text and text.endswith("\r")


@pytest.mark.timeout(120)
def test_planner_reports_each_symmetry_block():
    calls = []
    ans = planner.spectrum("direct(P(3)^6)", "laplacian", progress=lambda d, t: calls.append((d, t)))
    assert "symmetry" in ans.method
    # one call per block, counting up to the total
    assert calls and [d for d, _ in calls] == list(range(1, calls[-1][1] + 1))


@pytest.mark.timeout(120)
@pytest.mark.parametrize("quiet", [False, True])
def test_cli_passes_the_callback_and_quiet_silences_it(quiet, monkeypatch, capsys):
    monkeypatch.setattr(progress_module, "wants_bar", lambda q=False, stream=None: not q)
    seen = {}
    real = planner.spectrum

    def spy(*args, **kwargs):
        seen.update(kwargs)
        return real(*args, **kwargs)

    monkeypatch.setattr(planner, "spectrum", spy)
    argv = ["spectrum", "direct(P(3)^6)", "--matrix", "laplacian", "--workers", "1"]
    assert main(argv + (["--quiet"] if quiet else [])) == 0
    assert (seen["progress"] is None) == quiet
    assert seen["workers"] == 1 and seen["scheduler"] is None
    out, err = capsys.readouterr()
    assert "symmetry" in out and "Traceback" not in err
