"""Progress bar on stderr (tqdm) only on a terminal; exit codes in --help (issue 13)."""

from __future__ import annotations

import io

from costing import cli


def test_progress_is_silent_when_stderr_is_not_a_terminal(capsys):
    bar = cli._Progress("routing")  # under pytest stderr is captured, not a terminal
    for k in range(0, 201, 20):
        bar(k, 200)
    assert capsys.readouterr().err == ""


def test_progress_draws_a_bar_on_a_terminal(monkeypatch):
    err = io.StringIO()
    monkeypatch.setattr(cli, "PROGRESS_DELAY", 0.0)
    monkeypatch.setattr(cli.sys, "stderr", err)
    bar = cli._Progress("routing")
    bar.on = True  # as if stderr were a terminal
    for k in range(0, 201, 50):
        bar(k, 200)
    assert "routing" in err.getvalue() and "/200" in err.getvalue()  # drawn, then cleared at the end


def test_help_documents_the_exit_codes(cli):
    code, out, _ = cli("--help")
    assert code == 0 and "exit codes: 0" in out and "1 the input has errors" in out and "2 usage" in out
