"""The interview, driven as a subprocess with scripted stdin: killed midway, then resumed."""

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from elicit.interview import Interview, Term
from elicit.read import read_prior_file
from elicit.validate import parse_priors

ROOT = Path(__file__).resolve().parents[1]
# Invented data for the test.
DATA = "x1,x2,y\n0.1,1,2.0\n0.4,2,3.1\n0.9,1,4.2\n1.3,3,5.9\n1.8,2,6.1\n2.2,4,8.3\n"

# the units of x1 and x2, asked once before each predictor's questions (saved at once)
U1, U2 = ["kg"], ["h"]
# family, per, low, high, mass, expert, rationale, accept
X1 = ["normal", "1", "1", "4", "0.9", "analyst A", "steady rise in the invented pilot runs", "a"]
# an invalid answer (the highest below the lowest) refused the moment it is typed and retyped,
# then the whole answer revised after seeing the feedback
X2_BAD = ["laplace", "1", "2", "-2", "2.5", "0.8", "", "", "r"]
X2 = ["laplace", "2", "-1", "1", "0.8", "analyst B", "", "r",
      "laplace", "2", "-1", "1.5", "0.8", "analyst B", "no clear direction", "a"]  # fmt: skip
# low, high, mass, expert, rationale, accept
NOISE = ["0.3", "1.5", "0.9", "analyst C", "repeat runs of the invented pilot scatter", "a"]


def command(tmp_path):
    return [sys.executable, "-m", "elicit.cli", "interview", "--data", str(tmp_path / "d.csv"),
            "--response", "y", "--out", str(tmp_path / "p.toml")]  # fmt: skip


def lines(answers):
    return "".join(a + "\n" for a in answers)


def expected_doc():
    return {
        "study": {"response": "y"},
        "units": {"x1": "kg", "x2": "h"},
        "noise": {"low": 0.3, "high": 1.5, "mass": 0.9, "expert": "analyst C",
                  "rationale": "repeat runs of the invented pilot scatter"},
        "coefficient": [
            {"name": "x1", "family": "normal", "low": 1.0, "high": 4.0, "mass": 0.9,
             "expert": "analyst A", "rationale": "steady rise in the invented pilot runs"},
            {"name": "x2", "family": "laplace", "low": -1.0, "high": 1.5, "mass": 0.8, "per": 2.0,
             "expert": "analyst B", "rationale": "no clear direction"},
        ],
    }  # fmt: skip


def wait_for(predicate, what, limit=60.0):
    # a guard against hanging, not a timing check
    deadline = time.monotonic() + limit
    while time.monotonic() < deadline:
        if predicate():
            return
        time.sleep(0.05)
    raise AssertionError(f"gave up waiting for {what}")


def answered(path, column):
    try:
        return path.exists() and read_prior_file(path).get(column) is not None
    except Exception:
        return False


def test_kill_midway_then_resume(tmp_path):
    (tmp_path / "d.csv").write_text(DATA)
    out = tmp_path / "p.toml"
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    with open(tmp_path / "log1.txt", "w") as log:
        proc = subprocess.Popen(command(tmp_path), stdin=subprocess.PIPE, stdout=log,
                                stderr=subprocess.STDOUT, cwd=ROOT, env=env, text=True)  # fmt: skip
        proc.stdin.write(lines(U1 + X1))
        proc.stdin.flush()
        wait_for(lambda: answered(out, "x1"), "x1 to be saved")
        # half of x2's answers, then the process is killed at the next prompt
        proc.stdin.write(lines(U2 + X2[:3]))
        proc.stdin.flush()
        time.sleep(0.5)
        proc.send_signal(signal.SIGKILL)
        proc.wait()
    saved = read_prior_file(out)
    assert [c.column for c in saved.coefficients] == ["x1"]
    assert saved.get("x1").statements[0].expert == "analyst A"
    assert saved.noise is None
    # no temp files: only the draft of x2's three typed answers and the (stale) lock
    assert sorted(os.listdir(tmp_path)) == [
        "d.csv", "log1.txt", "p.toml", "p.toml.draft", "p.toml.lock"]  # fmt: skip

    # the three typed answers come back from the draft: the resumed input goes on from there
    again = X2[3:8] + X2_BAD + X2[8:] + NOISE
    resumed = subprocess.run(command(tmp_path), input=lines(again), cwd=ROOT,
                             env=env, text=True, capture_output=True)  # fmt: skip
    assert resumed.returncode == 0, resumed.stderr
    assert "resuming the draft: 3 typed answers" in resumed.stdout
    assert "Lowest plausible change in y per 2 h of x2: -1.0 (from the draft)" in resumed.stdout
    assert sorted(os.listdir(tmp_path)) == ["d.csv", "log1.txt", "p.toml"]
    assert "already answered: x1" in resumed.stdout
    assert "Units of x2" not in resumed.stdout  # the file has them: not asked again
    assert "Units of x1 (data: 0.1 to 2.2)" in (tmp_path / "log1.txt").read_text()
    assert "not accepted: must be above the lowest (2), got -2" in resumed.stdout
    assert "P(positive)" in resumed.stdout and "implied response" in resumed.stdout
    # the noise feedback of the interview: median and 90% interval of the sd, and the shape
    assert ("\nnoise sd: median 0.5547, 90% interval 0.3 .. 1.5 (inverse gamma on the variance, "
            "shape 1.415); stated by analyst C: repeat runs of the invented pilot scatter\n"
            ) in resumed.stdout  # fmt: skip
    final = read_prior_file(out)
    assert final == parse_priors(expected_doc(), source=str(out))

    # a third start has nothing left to ask (in-process: no prompt may be reached)
    said = []

    def no_questions(*args, **kwargs):
        raise AssertionError("asked a question on a finished file")

    Interview(out, "y", no_questions, said.append).run([Term("x1"), Term("x2")])
    assert "already answered: x1, x2" in said[0]
    assert read_prior_file(out) == final


def test_input_ending_early_keeps_accepted_answers(tmp_path):
    (tmp_path / "d.csv").write_text(DATA)
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    run = subprocess.run(command(tmp_path), input=lines(U1 + X1 + U2 + X2[:4]), cwd=ROOT, env=env,
                         text=True, capture_output=True)  # fmt: skip
    assert run.returncode == 2
    assert "run the same command to resume" in run.stderr
    assert "Traceback" not in run.stderr
    assert [c.column for c in read_prior_file(tmp_path / "p.toml").coefficients] == ["x1"]


def test_interview_api_with_scripted_answers(tmp_path):
    answers = iter(["student_t", "3", "10", "-5", "5", "0.95", "C", "why not", "a"])
    said, prompts = [], []

    def ask(prompt, type=None, default=None):
        prompts.append(prompt)
        value = next(answers)
        return type(value) if callable(type) and not hasattr(type, "choices") else value

    session = Interview(tmp_path / "q.toml", "y", ask, said.append)
    priors = session.run([Term("x1", units="kg")], noise=False)
    c = priors.get("x1")
    assert (c.family, c.df, c.statements[0].per) == ("student_t", 3.0, 10.0)
    assert read_prior_file(tmp_path / "q.toml") == parse_priors(
        {"study": {"response": "y"}, "coefficient": [
            {"name": "x1", "family": "student_t", "df": 3.0, "per": 10.0, "low": -5.0,
             "high": 5.0, "mass": 0.95, "expert": "C", "rationale": "why not"}]},
        source=str(tmp_path / "q.toml"),
    )  # fmt: skip
    # the predictor's units, in the heading and in the questions about the range
    assert "\n[1/1] x1 (kg)" in said
    assert prompts[2] == "The range is for a change of how many kg of x1"
    assert prompts[3] == "Lowest plausible change in y per 10 kg of x1"
    assert prompts[4] == "Highest plausible change in y per 10 kg of x1"


def test_resume_refuses_a_file_for_another_response(tmp_path):
    (tmp_path / "q.toml").write_text('[study]\nresponse = "other"\n')
    from elicit.errors import PriorFileError

    with pytest.raises(PriorFileError, match="field 'response'"):
        Interview(tmp_path / "q.toml", "y", None, None)


def test_conditional_questions_need_the_data(tmp_path):
    from elicit.errors import InputError

    session = Interview(tmp_path / "c.toml", "y", None, lambda text: None)
    with pytest.raises(InputError, match="need the data"):
        session.run([Term("x1")], conditional=True)
    assert not (tmp_path / "c.toml").exists()


def scripted(answers):
    it = iter(answers)

    def ask(prompt, type=None, default=None):
        value = next(it)
        if value == "" and default is not None:
            return default
        return type(value) if type in (float, str) else value

    return ask


def test_conditional_interview_reproduces_the_stated_rows_and_fits(tmp_path):
    import io

    import numpy as np
    import pandas as pd
    from scipy import stats

    from bayes.api import fit
    from elicit.interview import terms_from_data
    from elicit.predictive import prior_predictive

    frame = pd.read_csv(io.StringIO(DATA))
    # expert; rows (means, x1 high, x2 high): low, high, mass; accept; noise, its expert (the
    # default) and rationale (none); accept
    answers = [
        "A",
        "3",
        "6",
        "0.9",
        "6",
        "9",
        "0.9",
        "3",
        "6",
        "0.9",
        "a",
        "0.3",
        "1.5",
        "0.9",
        "",
        "",
        "a",
    ]
    out = tmp_path / "c.toml"
    session = Interview(out, "y", scripted(answers), lambda text: None, frame=frame)
    priors = session.run(terms_from_data(frame, "y"), conditional=True)
    assert read_prior_file(out) == priors
    block = priors.block
    assert block.names == ("intercept", "x1", "x2") and len(block.rows) == 3
    # the implied expected response at each stated row is the stated normal belief:
    # mean = midpoint, sd = half-width / z(0.95) (Source: scipy.stats.norm ppf)
    rows = [(f"row {i}", dict(r.at)) for i, r in enumerate(block.rows)]
    implied = prior_predictive(priors, rows, draws=20_000)
    for r, row in zip(block.rows, implied.rows, strict=True):
        sd = (r.high - r.low) / 2 / stats.norm.ppf(0.95)
        tol = 5 * np.sqrt(0.05 * 0.95 / 20_000) / stats.norm.pdf(1.6449) * sd  # 5 MC s.e.
        assert row.low == pytest.approx(r.low, abs=tol)
        assert row.high == pytest.approx(r.high, abs=tol)
    result = fit(frame, response="y", priors=out)
    assert result.priors.block == block


def test_a_second_interview_on_the_same_file_is_refused(tmp_path):
    (tmp_path / "d.csv").write_text(DATA)
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    lock = tmp_path / "p.toml.lock"
    first = subprocess.Popen(command(tmp_path), stdin=subprocess.PIPE, stdout=subprocess.DEVNULL,
                             stderr=subprocess.DEVNULL, cwd=ROOT, env=env, text=True)  # fmt: skip
    try:
        wait_for(lambda: lock.exists() and lock.read_text().strip() == str(first.pid), "the lock")
        second = subprocess.run(command(tmp_path), input=lines(X1), cwd=ROOT, env=env,
                                text=True, capture_output=True, timeout=60)  # fmt: skip
        assert second.returncode == 2
        assert second.stderr.count("\n") == 1 and "Traceback" not in second.stderr
        assert f"another interview (pid {first.pid})" in second.stderr
        assert not (tmp_path / "p.toml").exists()  # nothing asked, nothing written
    finally:
        first.kill()
        first.wait()
    # the lock of the killed process is stale: the next interview takes it over
    typed = lines(U1 + X1 + U2 + X2 + NOISE)
    run = subprocess.run(command(tmp_path), input=typed, cwd=ROOT, env=env,
                         text=True, capture_output=True, timeout=120)  # fmt: skip
    assert run.returncode == 0, run.stderr
    assert not lock.exists()


def test_an_unwritable_out_is_refused_before_the_first_question(tmp_path, monkeypatch):
    from elicit.errors import InputError

    def no_questions(*args, **kwargs):
        raise AssertionError("asked a question with an unwritable output file")

    out = tmp_path / "u.toml"
    monkeypatch.setattr(os, "access", lambda path, mode: Path(path) != tmp_path)
    with pytest.raises(InputError, match="is not writable"):
        Interview(out, "y", no_questions, lambda text: None).run([Term("x1")])
    monkeypatch.setattr(os, "access", lambda path, mode: Path(path) != out)
    out.write_text('[study]\nresponse = "y"\n')
    with pytest.raises(InputError, match="the file is not writable"):
        Interview(out, "y", no_questions, lambda text: None).run([Term("x1")])


def test_each_answer_is_checked_the_moment_it_is_typed(tmp_path):
    # family, per (0 refused, then 2), low, high (below low: refused, then 3), mass (1.5
    # refused, then 0.9), expert, rationale, accept
    answers = iter(["normal", "0", "2", "1", "-1", "3", "1.5", "0.9", "A", "", "a"])
    said, prompts = [], []

    def ask(prompt, type=None, default=None):
        prompts.append(prompt)
        value = next(answers)
        return type(value) if callable(type) and not hasattr(type, "choices") else value

    priors = Interview(tmp_path / "q.toml", "y", ask, said.append).run([Term("x1")], noise=False)
    s = priors.get("x1").statements[0]
    assert (s.per, s.low, s.high, s.mass) == (2.0, 1.0, 3.0, 0.9)
    # every refused answer is asked again at once, before any other question
    per, low, high, mass = (prompts[i] for i in (1, 3, 4, 6))
    assert prompts[1:8] == [per, per, low, high, high, mass, mass]
    refusals = [line for line in said if line.startswith("not accepted:")]
    assert refusals == [
        "not accepted: must be positive, got 0",
        "not accepted: must be above the lowest (1), got -1",
        "not accepted: a probability must lie strictly between 0 and 1, got 1.5",
    ]


def test_the_row_label_and_unused_columns_are_said_before_the_questions(tmp_path):
    # invented data: an identifier column (all values distinct) and an empty one
    data = "plot,x1,notes,y\nP1,0.1,,2.0\nP2,0.4,,3.1\nP3,0.9,,4.2\nP4,1.3,,5.9\n"
    (tmp_path / "d.csv").write_text(data)
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    run = subprocess.run(command(tmp_path), input="", cwd=ROOT, env=env, text=True,
                         capture_output=True, timeout=120)  # fmt: skip
    assert run.returncode == 2 and "Traceback" not in run.stderr
    said = run.stdout.splitlines()
    label = "row label: plot (all values distinct; not a predictor)"
    unused = "not used: notes (no values)"
    assert said[:2] == [label, unused], said
    assert any(line.startswith("Units of x1 (data: 0.1 to 1.3)") for line in said[2:]), said
