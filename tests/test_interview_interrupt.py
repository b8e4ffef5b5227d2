"""Interrupting the interview (Ctrl-C as SIGINT, end of input): exit 2 and a true message."""

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
# Invented data for the test.
DATA = "x1,y\n0.1,2.0\n0.4,3.1\n0.9,4.2\n1.3,5.9\n"
# family, per, low, high, mass, expert, rationale, accept
# the units of x1 (the first question, saved at once); a blank answer saves nothing
U1, NO_UNITS = ["kg"], [""]
X1 = ["normal", "1", "1", "4", "0.9", "analyst A", "", "a"]


def command(tmp_path, data=None):
    data = data or tmp_path / "d.csv"
    return [sys.executable, "-m", "elicit.cli", "interview", "--data", str(data),
            "--response", "y", "--out", str(tmp_path / "p.toml")]  # fmt: skip


def wait_for(predicate, what, limit=60.0):
    # a guard against hanging, not a timing check
    deadline = time.monotonic() + limit
    while time.monotonic() < deadline:
        if predicate():
            return
        time.sleep(0.05)
    raise AssertionError(f"gave up waiting for {what}")


def interrupt_at(tmp_path, typed, prompt, count=1):
    """Start the interview, type ``typed``; SIGINT once ``prompt`` was shown ``count`` times."""
    (tmp_path / "d.csv").write_text(DATA)
    log = tmp_path / "out.txt"
    env = dict(os.environ, PYTHONPATH=str(ROOT), PYTHONUNBUFFERED="1")
    with open(log, "w") as handle:
        proc = subprocess.Popen(command(tmp_path), stdin=subprocess.PIPE, stdout=handle,
                                stderr=subprocess.PIPE, cwd=ROOT, env=env, text=True)  # fmt: skip
        try:
            proc.stdin.write("".join(a + "\n" for a in typed))
            proc.stdin.flush()
            wait_for(lambda: log.read_text().count(prompt) >= count, repr(prompt))
            time.sleep(0.2)  # the prompt is printed just before input() waits
            proc.send_signal(signal.SIGINT)
            _, err = proc.communicate(timeout=60)
        finally:
            proc.kill()
    return proc.returncode, err


def test_ctrl_c_at_the_first_prompt(tmp_path):
    code, err = interrupt_at(tmp_path, [], "Units of x1")
    assert code == 2 and "Traceback" not in err
    assert "nothing accepted yet" in err and "nothing written" in err
    assert not (tmp_path / "p.toml").exists()
    assert not (tmp_path / "p.toml.draft").exists()


def test_ctrl_c_mid_question_keeps_the_draft(tmp_path):
    code, err = interrupt_at(tmp_path, NO_UNITS + X1[:3], "Highest plausible")
    assert code == 2 and "Traceback" not in err
    draft = tmp_path / "p.toml.draft"
    assert (
        f"nothing accepted yet; the answers typed for the current question are kept in {draft}"
        in err
    )
    assert not (tmp_path / "p.toml").exists() and draft.exists()  # the named file exists


def test_ctrl_c_after_an_accepted_answer_names_the_file(tmp_path):
    code, err = interrupt_at(tmp_path, U1 + X1, "Lowest plausible residual")
    out = tmp_path / "p.toml"
    assert code == 2 and f"accepted answers are in {out}" in err
    assert out.exists()


def test_end_of_input_before_any_answer(tmp_path):
    (tmp_path / "d.csv").write_text(DATA)
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    run = subprocess.run(command(tmp_path), input="", cwd=ROOT, env=env, text=True,
                         capture_output=True, timeout=120)  # fmt: skip
    assert run.returncode == 2 and "Traceback" not in run.stderr
    assert "nothing accepted yet" in run.stderr and not (tmp_path / "p.toml").exists()


@pytest.mark.skipif(not Path("/proc/self/wchan").exists(), reason="needs /proc wchan")
def test_ctrl_c_before_the_first_prompt_exits_2(tmp_path):
    # the data is a FIFO no one writes: the command blocks reading it, before any prompt
    fifo = tmp_path / "d.csv"
    os.mkfifo(fifo)
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    proc = subprocess.Popen(command(tmp_path, fifo), stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, cwd=ROOT, env=env, text=True)  # fmt: skip
    try:
        wchan = Path(f"/proc/{proc.pid}/wchan")
        wait_for(lambda: wchan.read_text().strip() == "wait_for_partner", "the blocked read")
        for _ in range(60):  # on a loaded machine the first Ctrl-C may come before the handler
            proc.send_signal(signal.SIGINT)
            try:
                out, err = proc.communicate(timeout=1)
                break
            except subprocess.TimeoutExpired:
                continue
    finally:
        proc.kill()
    assert proc.returncode == 2 and "Traceback" not in err
    assert err.strip() == "elicit: interrupted; nothing was written"
    assert not (tmp_path / "p.toml").exists()
