"""SIGTERM and SIGHUP during the write: the run stops with a one-line message and a non-zero
exit code, and leaves no hidden part file and no output behind, as Ctrl-C does.

The write is held open by COSTING_TEST_PAUSE_WRITE (a hook used only by tests), which writes the
part file's path to a flag file and waits; the test then sends the signal. Exit code 128 + the
signal number is the shell convention (POSIX, "Exit Status" of the Shell Command Language; from
memory)."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time

import pytest


def _run_and_signal(make_input, tmp_path, sig) -> tuple[int, str, str]:
    folder = tmp_path / "out"
    folder.mkdir()
    inp = make_input()
    flag = tmp_path / "paused.flag"
    env = {**os.environ, "COSTING_TEST_PAUSE_WRITE": str(flag),
           "PYTHONPATH": os.pathsep.join([os.path.dirname(os.path.dirname(__file__)),
                                          os.environ.get("PYTHONPATH", "")])}
    proc = subprocess.Popen([sys.executable, "-m", "costing.cli", "run", inp, "-o",
                             str(folder / "costed.xlsx")], env=env, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)
    try:
        deadline = time.monotonic() + 120
        while not flag.exists() and proc.poll() is None and time.monotonic() < deadline:
            time.sleep(0.05)
        assert flag.exists(), proc.communicate(timeout=30)
        part = flag.read_text()
        assert os.path.exists(part), "the part file exists while writing"
        proc.send_signal(sig)
        out, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    return proc.returncode, err, str(folder)


@pytest.mark.skipif(not hasattr(signal, "SIGHUP"), reason="POSIX signals")
@pytest.mark.parametrize("name", ["SIGTERM", "SIGHUP"])
def test_stop_signal_mid_write_leaves_nothing(name, make_input, tmp_path):
    sig = getattr(signal, name)
    code, err, folder = _run_and_signal(make_input, tmp_path, sig)
    assert code == 128 + sig, (code, err)
    assert os.listdir(folder) == [], os.listdir(folder)  # no .part file, no output
    assert "Traceback" not in err, err
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert lines == [f"costing: stopped by {name}; no output written, earlier output left as it was"], err


def test_earlier_output_survives_sigterm(make_input, tmp_path, cli):
    folder = tmp_path / "out"
    folder.mkdir()
    out = folder / "costed.xlsx"
    code, _o, _e = cli("run", make_input(), "-o", str(out))
    assert code == 0
    before = out.read_bytes()
    flag = tmp_path / "paused.flag"
    env = {**os.environ, "COSTING_TEST_PAUSE_WRITE": str(flag),
           "PYTHONPATH": os.pathsep.join([os.path.dirname(os.path.dirname(__file__)),
                                          os.environ.get("PYTHONPATH", "")])}
    proc = subprocess.Popen([sys.executable, "-m", "costing.cli", "run", make_input(name="b.xlsx"),
                             "-o", str(out), "--overwrite"], env=env, stderr=subprocess.PIPE, text=True)
    try:
        deadline = time.monotonic() + 120
        while not flag.exists() and proc.poll() is None and time.monotonic() < deadline:
            time.sleep(0.05)
        assert flag.exists()
        proc.send_signal(signal.SIGTERM)
        proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    assert proc.returncode == 128 + signal.SIGTERM
    assert sorted(os.listdir(folder)) == ["costed.xlsx"]
    assert out.read_bytes() == before
