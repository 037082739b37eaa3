"""The measure progress bar: drawn on a real terminal (a pty), silent on pipes and files."""
from __future__ import annotations

import io
import os
import select

from auditor.progress import progress


def drain(fd: int) -> bytes:
    out = b""
    while select.select([fd], [], [], 0.2)[0]:
        chunk = os.read(fd, 65536)
        if not chunk:
            break
        out += chunk
    return out


def test_bar_on_a_terminal() -> None:
    master, slave = os.openpty()
    with os.fdopen(slave, "w", encoding="utf-8") as tty:
        with progress(3, "measuring findings", stream=tty) as bar:
            for _ in range(3):
                bar.advance()
        tty.flush()
        shown = drain(master).decode("utf-8", "replace")
    os.close(master)
    assert "measuring findings" in shown
    assert "3/3" in shown


def test_silent_when_not_a_terminal(tmp_path) -> None:
    buffer = io.StringIO()
    with progress(50, "measuring", stream=buffer) as bar:
        bar.advance(50)
    assert buffer.getvalue() == ""
    with open(tmp_path / "log.txt", "w") as log:
        with progress(50, "measuring", stream=log) as bar:
            bar.advance()
    assert (tmp_path / "log.txt").read_text() == ""


def test_one_step_draws_nothing_even_on_a_terminal() -> None:
    master, slave = os.openpty()
    with os.fdopen(slave, "w") as tty:
        with progress(1, "measuring", stream=tty) as bar:
            bar.advance()
        tty.flush()
        assert drain(master) == b""
    os.close(master)


def test_measure_run_shows_the_bar_only_on_a_terminal(tmp_path) -> None:
    import subprocess
    import sys
    from pathlib import Path

    root = Path(__file__).resolve().parent.parent
    (tmp_path / "gauge.py").write_text("import math\n\n\ndef gain(x):\n    return math.exp(x) - 1\n\n\n"
                                       "def loss(y):\n    return math.log(1 + y)\n")
    command = [sys.executable, "-m", "auditor", "measure", "gauge.py", "--samples", "16", "--fail-on", "never"]
    env = {**os.environ, "PYTHONPATH": str(root)}
    piped = subprocess.run(command, cwd=tmp_path, env=env, capture_output=True, text=True, timeout=300)
    assert piped.returncode == 0 and piped.stderr == ""
    master, slave = os.openpty()
    child = subprocess.Popen(command, cwd=tmp_path, env=env, stdout=subprocess.PIPE, stderr=slave)
    shown = b""
    while child.poll() is None:  # keep our copy of the slave open: the buffer stays readable
        shown += drain(master)
    shown += drain(master)
    child.communicate(timeout=300)
    os.close(slave)
    os.close(master)
    assert child.returncode == 0
    assert b"measuring findings" in shown
