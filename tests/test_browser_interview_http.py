"""The browser interview's server over plain HTTP: what it refuses, what it writes, the lock.

Every request here is one a browser page would not send (no token, a foreign Host, a form post),
sent with http.client against a server in this process, or against the command itself run as a
subprocess for the lock.
"""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys

import pytest
from browser_helpers import DEMO_CSV, ROOT, Client, command, served, start, stop, study

from elicit import io as eio
from elicit.errors import PriorFileError
from elicit.read import read_prior_file
from elicit.validate import parse_priors

# A statement of the demo's water/cement slope: 90% sure that 0.1 more water/cement changes the
# strength by -9 to -3 MPa (invented).
RANGE = {"column": "water_cement", "method": "range", "family": "normal", "per": "0.1",
         "low": "-9", "high": "-3", "mass": "0.9", "expert": "Engineer A",
         "rationale": "more water, weaker paste (invented)"}  # fmt: skip
PATHS = ["/", "/static/app.js", "/static/draw.js", "/static/app.css", "/api/state",
         "/api/summary"]  # fmt: skip


@pytest.fixture
def server(tmp_path):
    with served(study(tmp_path / "priors.toml")) as s:
        yield s


@pytest.fixture
def client(server):
    return Client(server.address)


def _leftovers(folder):
    return sorted(p.name for p in folder.iterdir() if p.name.startswith("."))


# --------------------------------------------------------------------------- the token


@pytest.mark.parametrize("path", PATHS)
def test_every_page_needs_the_token(client, path):
    assert client.get(path, token="query").status == 200
    assert client.get(path, token="header").status == 200
    refused = client.get(path, token=None)
    assert refused.status == 403
    assert "token" in refused.json()["error"]
    # a wrong token, one of another length and an empty one
    for wrong in (client.token[:-1] + ("A" if client.token[-1] != "A" else "B"), "x", ""):
        assert client.get(path, token=None, headers={"X-Elicit-Token": wrong}).status == 403
        assert client.get(f"{path}?token={wrong}", token=None).status == 403


def test_the_refusal_gives_away_nothing(client):
    refused = client.get("/", token=None)
    assert client.token.encode() not in refused.body
    assert refused.headers["Content-Type"].startswith("application/json")


def test_the_token_is_random_per_server(tmp_path):
    tokens = set()
    for name in ("a.toml", "b.toml", "c.toml"):
        with served(study(tmp_path / name)) as s:
            tokens.add(s.token)
            assert len(s.token) >= 32  # 24 random bytes, url-safe base64
    assert len(tokens) == 3


def test_a_state_changing_request_needs_the_token_header(client, server):
    out = server.session.study.out
    for path in ("/api/preview", "/api/accept", "/api/others"):
        # in the query only (a link or a form on another page could carry it), or not at all
        for token in ("query", None):
            refused = client.post(path, RANGE, token=token)
            assert refused.status == 403, (path, token)
            assert "X-Elicit-Token" in refused.json()["error"]
    # a cross-site HTML form can only send form encodings, and no custom header
    form = b"column=water_cement&low=-9&high=-3&mass=0.9"
    plain = {"Content-Type": "application/x-www-form-urlencoded"}
    assert client.request("POST", "/api/accept", raw=form, token=None, headers=plain).status == 403
    assert client.request("POST", "/api/accept", raw=form, headers=plain).status == 415
    assert not out.exists()


# --------------------------------------------------------------------------- the Host header


@pytest.mark.parametrize(
    "host",
    ["evil.example", "evil.example:80", "attacker.test:{port}", "127.0.0.1:1", "127.0.0.2:{port}",
     "127.0.0.1", "localhost", "[::1]:{port}", "127.0.0.1:{port}.evil.example", ""],
)  # fmt: skip
def test_a_foreign_host_is_refused_even_with_the_token(client, host):
    # DNS rebinding: a page on attacker.test whose name now resolves to 127.0.0.1 sends
    # Host: attacker.test:PORT (and could have learnt the token no other way than guessing)
    sent = host.format(port=client.port)
    for path in PATHS:
        refused = client.get(path, host=sent, token="query")
        assert refused.status == 421, (sent, path)
        assert "own address" in refused.json()["error"]
    assert client.post("/api/accept", RANGE, host=sent).status == 421


def test_the_loopback_names_are_its_own_address(client):
    assert client.get("/api/state", host=f"127.0.0.1:{client.port}").status == 200
    assert client.get("/api/state", host=f"localhost:{client.port}").status == 200


def test_a_request_without_host_is_refused(client):
    with socket.create_connection((client.host, client.port), timeout=60) as s:
        s.sendall(f"GET /api/state?token={client.token} HTTP/1.0\r\n\r\n".encode())
        answer = b""
        while chunk := s.recv(65536):
            answer += chunk
    assert answer.startswith(b"HTTP/1.0 421")


# --------------------------------------------------------------------------- the answers' headers


def _csp(reply) -> dict[str, list[str]]:
    policy = reply.headers["Content-Security-Policy"]
    assert policy, "no Content-Security-Policy"
    parts = [d.split() for d in policy.split(";") if d.strip()]
    return {d[0]: d[1:] for d in parts}


@pytest.mark.parametrize("path", [*PATHS, "/nowhere"])
@pytest.mark.parametrize("token", ["query", None])
def test_every_answer_forbids_loads_from_elsewhere(client, path, token):
    reply = client.get(path, token=token)
    csp = _csp(reply)
    assert csp["default-src"] == ["'none'"]  # anything not named below: nothing at all
    for directive in ("script-src", "style-src", "connect-src"):
        assert csp[directive] == ["'self'"], directive  # no inline script, no CDN, no socket
    assert set(csp["img-src"]) <= {"'self'", "data:"}
    assert csp["frame-ancestors"] == ["'none'"] and csp["form-action"] == ["'none'"]
    assert csp["base-uri"] == ["'none'"]
    for sources in csp.values():  # no scheme or host source anywhere
        assert not [s for s in sources if s not in ("'self'", "'none'", "data:")], csp
    assert reply.headers["X-Content-Type-Options"] == "nosniff"
    assert reply.headers["Referrer-Policy"] == "no-referrer"
    assert reply.headers["Cache-Control"] == "no-store"


def test_the_page_and_its_files_name_nothing_outside():
    # the SVG namespace is a name, not a load; nothing else may name a scheme or a host
    folder = ROOT / "elicit" / "browser" / "static"
    for path in folder.iterdir():
        text = path.read_text().replace("http://www.w3.org/2000/svg", "")
        for sign in ("http:", "https:", "//cdn", "@import", "url(", "<script>", "ws:", "wss:"):
            assert sign not in text, (path.name, sign)


# --------------------------------------------------------------------------- invalid statements


def _validator_message(entry: dict) -> str:
    doc = {"study": {"response": "strength"}, "coefficient": [entry]}
    with pytest.raises(PriorFileError) as caught:
        parse_priors(doc, source="check")
    return str(caught.value)


@pytest.mark.parametrize(
    ("change", "field", "entry"),
    [
        ({"low": "-3", "high": "-9"}, "high",
         {"name": "water_cement", "family": "normal", "low": -3.0, "high": -9.0, "mass": 0.9,
          "per": 0.1}),
        ({"mass": "1.5"}, "mass",
         {"name": "water_cement", "family": "normal", "low": -9.0, "high": -3.0, "mass": 1.5,
          "per": 0.1}),
        ({"per": "-0.1"}, "per",
         {"name": "water_cement", "family": "normal", "low": -9.0, "high": -3.0, "mass": 0.9,
          "per": -0.1}),
        ({"family": "student_t", "df": "0"}, "df",
         {"name": "water_cement", "family": "student_t", "df": 0.0, "low": -9.0, "high": -3.0,
          "mass": 0.9, "per": 0.1}),
    ],
)  # fmt: skip
def test_an_invalid_statement_gets_the_validators_message_and_nothing_is_written(
    client, server, change, field, entry
):
    out = server.session.study.out
    expected = _validator_message(entry)
    assert f"field '{field}'" in expected
    for path in ("/api/preview", "/api/accept"):
        reply = client.post(path, {**RANGE, **change})
        assert reply.status == 200
        answer = reply.json()
        assert answer["ok"] is False
        assert list(answer["errors"]) == [field]
        assert expected.endswith(": " + answer["errors"][field]), (expected, answer)
    assert not out.exists()
    assert _leftovers(out.parent) == []
    assert client.get("/api/state").json()["items"][0]["answered"] is False


@pytest.mark.parametrize(
    ("change", "field"),
    [({"low": ""}, "low"), ({"high": "a lot"}, "high"), ({"mass": "nan"}, "mass"),
     ({"method": "guess"}, "method"), ({"family": "flat"}, "family"),
     ({"method": "quantiles", "q0": "-5", "q1": "-6", "q2": "-3"}, "q1"),
     ({"method": "bins", "bin_low": "-10", "bin_high": "-2", "bin_count": "4",
       "chips": [5, 5, 5, 4]}, "chips"),
     ({"method": "bins", "bin_low": "-2", "bin_high": "-10", "chips": []}, "bin_high"),
     ({"method": "bins", "bin_low": "-10", "bin_high": "-2", "bin_count": "200"}, "bin_count")],
)  # fmt: skip
def test_a_form_that_is_not_a_statement_is_refused_beside_its_field(client, server, change, field):
    answer = client.post("/api/accept", {**RANGE, **change}).json()
    assert answer["ok"] is False and field in answer["errors"], answer
    assert not server.session.study.out.exists()


def test_the_chips_must_all_be_placed(client):
    bins = {**RANGE, "method": "bins", "bin_low": "-10", "bin_high": "-2", "bin_count": "4"}
    assert client.post("/api/preview", {**bins, "chips": [5, 5, 5, 4]}).json()["errors"] == {
        "chips": "place all 20 chips (1 left)"}  # fmt: skip
    assert client.post("/api/preview", {**bins, "chips": [5, 5, 5, 6]}).json()["errors"] == {
        "chips": "1 chips too many: 20 in all"}  # fmt: skip
    assert client.post("/api/preview", {**bins, "chips": [5, 5, 5, 5]}).json()["ok"] is True


# --------------------------------------------------------------------------- accepted answers


def test_an_accepted_answer_is_saved_at_once_atomically(client, server, monkeypatch):
    out = server.session.study.out
    replaced = []
    real = os.replace

    def replace(src, dst):
        replaced.append((os.path.dirname(src), os.path.basename(src), str(dst)))
        return real(src, dst)

    monkeypatch.setattr(eio.os, "replace", replace)
    answer = client.post("/api/accept", RANGE).json()
    assert answer["ok"] is True and answer["saved"] == str(out)
    # written the moment it was accepted, by one rename of a complete file beside it
    assert [(d, dst) for d, _, dst in replaced] == [(str(out.parent), str(out))]
    assert replaced[0][1].startswith(f".{out.name}.")
    assert _leftovers(out.parent) == []
    priors = read_prior_file(out)
    (s,) = priors.get("water_cement").statements
    assert (s.low, s.high, s.mass, s.per) == (-9.0, -3.0, 0.9, 0.1)
    assert s.expert == "Engineer A" and s.rationale == "more water, weaker paste (invented)"
    assert priors.response == "strength" and priors.response_units == "MPa"
    state = client.get("/api/state").json()
    assert state["items"][0]["answered"] is True and state["expert"] == "Engineer A"


def test_a_failed_write_leaves_the_file_as_it_was(client, server, monkeypatch):
    out = server.session.study.out
    assert client.post("/api/accept", RANGE).json()["ok"] is True
    before = out.read_bytes()

    def full_disk(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(eio.os, "replace", full_disk)
    second = {**RANGE, "column": "fly_ash", "per": "0.1", "low": "-2", "high": "2"}
    reply = client.post("/api/accept", second)
    assert reply.status == 500
    message = reply.json()["error"]
    assert "No space left on device" in message and "not saved" in message
    assert "bug" not in message
    assert out.read_bytes() == before
    assert _leftovers(out.parent) == []
    monkeypatch.undo()
    state = client.get("/api/state").json()  # the session did not count it as saved
    assert [i["answered"] for i in state["items"][:2]] == [True, False]
    assert client.post("/api/accept", second).json()["ok"] is True
    assert read_prior_file(out).get("fly_ash") is not None


def test_an_answer_is_accepted_once(client, server):
    # two tabs of one server: the second accept of the same question is refused, not doubled
    assert client.post("/api/accept", RANGE).json()["ok"] is True
    again = client.post("/api/accept", {**RANGE, "low": "-20"})
    assert again.status == 409 and "already answered" in again.json()["error"]
    (s,) = read_prior_file(server.session.study.out).get("water_cement").statements
    assert s.low == -9.0


def test_other_experts_only_after_answering(tmp_path):
    other = tmp_path / "other.toml"
    other.write_text('[study]\nresponse = "strength"\n[[coefficient]]\nname = "water_cement"\n'
                     'family = "normal"\nlow = -6\nhigh = -1\nmass = 0.9\nper = 0.1\n'
                     'expert = "Engineer B"\n')  # fmt: skip
    with served(study(tmp_path / "priors.toml", others=[other])) as s:
        client = Client(s.address)
        early = client.post("/api/others", {"column": "water_cement"})
        assert early.status == 409 and "first" in early.json()["error"]
        assert client.post("/api/accept", RANGE).json()["ok"] is True
        shown = client.post("/api/others", {"column": "water_cement"}).json()
        assert [e["expert"] for e in shown["experts"]] == ["Engineer B"]
        assert shown["pool"] is not None and "Linear pool of 2" in shown["words"]


# --------------------------------------------------------------------------- other requests


def test_requests_outside_the_interview_are_refused(client):
    assert client.get("/static/../api.py").status == 404
    assert client.get("/static/%2e%2e/api.py").status == 404
    assert client.get("/static/index.html").status == 404
    assert client.get("/elicit/browser/server.py").status == 404
    assert client.post("/api/nowhere", {}).status == 404
    for method in ("PUT", "DELETE", "PATCH", "OPTIONS"):
        assert client.request(method, "/api/accept").status == 405
    assert client.post("/api/accept", {"column": "no_such_column"}).status == 404
    assert client.request("POST", "/api/accept", raw=b"{not json",
                          headers={"Content-Type": "application/json"}).status == 400  # fmt: skip
    assert client.post("/api/accept", [1, 2]).status == 400
    big = b'{"x": "' + b"a" * (300 * 1024) + b'"}'
    assert client.request("POST", "/api/accept", raw=big,
                          headers={"Content-Type": "application/json"}).status == 413  # fmt: skip
    bad_length = {"Content-Type": "application/json", "Content-Length": "-5"}
    assert client.request("POST", "/api/accept", raw=b"{}", headers=bad_length).status == 413


def test_a_head_request_has_no_body(client):
    reply = client.request("HEAD", "/api/state")
    assert reply.status == 200 and reply.body == b""


# --------------------------------------------------------------------------- the lock


def _terminal(out, response="strength"):
    return subprocess.run(
        [sys.executable, "-m", "elicit.cli", "interview", "--data", str(DEMO_CSV),
         "--response", response, "--out", str(out)],
        input="", capture_output=True, text=True, timeout=300, cwd=ROOT,
        env=dict(os.environ, PYTHONPATH=str(ROOT)),
    )  # fmt: skip


def test_two_servers_or_a_terminal_cannot_write_one_file(tmp_path):
    out = tmp_path / "priors.toml"
    first, address = start(command(DEMO_CSV, out, "--expert", "Engineer A"))
    try:
        env = dict(os.environ, PYTHONPATH=str(ROOT))
        second = subprocess.run(command(DEMO_CSV, out), capture_output=True, text=True,
                                timeout=300, cwd=ROOT, env=env)  # fmt: skip
        assert second.returncode == 2
        (line,) = second.stderr.strip().splitlines()
        assert line.startswith("elicit: out ") and f"pid {first.pid}" in line, line
        terminal = _terminal(out)
        assert terminal.returncode == 2
        assert f"another interview (pid {first.pid})" in terminal.stderr
        assert not out.exists()  # neither wrote anything
        # the first still answers and saves
        assert Client(address).post("/api/accept", RANGE).json()["ok"] is True
        saved = out.read_bytes()
        assert _terminal(out).returncode == 2
        assert out.read_bytes() == saved
    finally:
        first.send_signal(signal.SIGKILL)  # the system releases the lock of a dead process
        stop(first)
    # killed, it left its lock file behind; the next interview takes the lock over and resumes
    again, address = start(command(DEMO_CSV, out))
    try:
        state = Client(address).get("/api/state").json()
        assert state["items"][0]["answered"] is True and state["expert"] == "Engineer A"
    finally:
        stop(again)


def test_the_command_refuses_a_wildcard_host_and_warns_for_another(tmp_path):
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    args = command(DEMO_CSV, tmp_path / "p.toml", "--host", "0.0.0.0")
    run = subprocess.run(args, capture_output=True, text=True, timeout=300, cwd=ROOT, env=env)
    assert run.returncode == 2
    assert (
        run.stderr.strip().startswith("elicit: --host 0.0.0.0: ") and "Traceback" not in run.stderr
    )
    from elicit.browser.launch import check_host

    assert check_host("127.0.0.1") is None and check_host("localhost") is None
    assert check_host("192.168.1.20").startswith("warning: serving on 192.168.1.20")


def test_ctrl_c_stops_the_server_and_releases_the_lock(tmp_path):
    out = tmp_path / "priors.toml"
    proc, address = start(command(DEMO_CSV, out))
    try:
        assert Client(address).post("/api/accept", RANGE).json()["ok"] is True
        proc.send_signal(signal.SIGINT)
        printed, err = proc.communicate(timeout=60)
    finally:
        stop(proc)
    assert proc.returncode == 0, err
    assert b"stopped; accepted answers are in the prior file" in printed
    assert not (tmp_path / "priors.toml.lock").exists()
    assert read_prior_file(out).get("water_cement") is not None


def test_a_predictor_named_like_the_noise_is_refused(tmp_path):
    data = tmp_path / "d.csv"
    data.write_text("noise,y\n0.1,2.0\n0.4,3.1\n0.9,4.2\n1.3,5.9\n")  # invented
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    args = command(data, tmp_path / "p.toml", response="y")
    run = subprocess.run(args, capture_output=True, text=True, timeout=300, cwd=ROOT, env=env)
    assert run.returncode == 2
    assert run.stderr.startswith("elicit: --browser: the data have a predictor named 'noise'")
    assert not (tmp_path / "p.toml").exists() and not (tmp_path / "p.toml.lock").exists()


def test_the_terminal_interview_resumes_what_the_browser_saved(client, server):
    out = server.session.study.out
    bins = {**RANGE, "method": "bins", "bin_low": "-10", "bin_high": "-2", "bin_count": "4",
            "chips": [2, 8, 7, 3]}  # fmt: skip
    quantiles = {**RANGE, "column": "fly_ash", "method": "quantiles", "quantile_set": "wide",
                 "q0": "-3", "q1": "-1", "q2": "2"}  # fmt: skip
    for body in (bins, quantiles):
        assert client.post("/api/accept", body).json()["ok"] is True
    saved = out.read_bytes()
    run = _terminal(out)  # no answers on stdin: it resumes, asks the next question, stops
    assert "already answered: water_cement, fly_ash" in run.stdout, run.stdout
    assert "curing_temp" in run.stdout and run.returncode == 2
    assert out.read_bytes() == saved


# --------------------------------------------------------------------------- units and [model]


def test_the_units_are_asked_once_and_saved_with_the_answer(client, server, monkeypatch):
    out = server.session.study.out
    (item, *_) = client.get("/api/state").json()["items"]
    # the terminal interview's question (elicit.answers.units_prompt), the data's range shown
    assert item["units_prompt"].startswith("Units of water_cement (data: ")
    preview = client.post("/api/preview", {**RANGE, "units": "ratio"}).json()
    assert "per 0.1 ratio of water_cement" in preview["view"]["xlabel"]
    assert not out.exists()  # a preview writes nothing, the units included
    replaced = []
    real = os.replace
    monkeypatch.setattr(eio.os, "replace", lambda a, b: (replaced.append(b), real(a, b)))
    assert client.post("/api/accept", {**RANGE, "units": " ratio "}).json()["ok"] is True
    assert replaced == [out]  # units and answer in one atomic write
    priors = read_prior_file(out)
    assert priors.units == {"water_cement": "ratio"} and priors.get("water_cement") is not None
    state = client.get("/api/state").json()
    first = state["items"][0]
    assert first["units"] == "ratio" and first["units_prompt"] is None
    assert first["view"]["xlabel"] == "change in strength per 0.1 ratio of water_cement (MPa)"
    assert "MPa per 0.05 ratio of water_cement." in first["view"]["words"]["restated"][0]
    # another predictor is asked its own; a blank answer gives none (as in the terminal)
    fly = {**RANGE, "column": "fly_ash", "low": "-2", "high": "1", "units": "  "}
    assert state["items"][1]["units_prompt"].startswith("Units of fly_ash (data: ")
    assert client.post("/api/accept", fly).json()["ok"] is True
    assert read_prior_file(out).units == {"water_cement": "ratio"}


def test_a_resumed_file_with_units_is_not_asked_again(tmp_path):
    out = tmp_path / "priors.toml"
    with served(study(out)) as s:
        c = Client(s.address)
        assert c.post("/api/accept", {**RANGE, "units": "ratio"}).json()["ok"] is True
    with served(study(out)) as s:  # the server restarted on the same file
        c = Client(s.address)
        item = c.get("/api/state").json()["items"][0]
        assert item["units"] == "ratio" and item["units_prompt"] is None
        assert "ratio of water_cement" in item["view"]["xlabel"]
        # the predictors whose units the file lacks are still asked, with their first answer
        curing = {**RANGE, "column": "curing_temp", "per": "5", "low": "0", "high": "4",
                  "units": "degC"}  # fmt: skip
        assert c.post("/api/accept", curing).json()["ok"] is True
        assert c.post("/api/accept", {**RANGE, "column": "fly_ash", "units": "share"}).json()["ok"]
    assert read_prior_file(out).units == {"water_cement": "ratio", "curing_temp": "degC",
                                          "fly_ash": "share"}  # fmt: skip


def test_bad_units_get_the_validators_message_beside_the_field(client, server):
    out = server.session.study.out
    doc = {"study": {"response": "strength"}, "units": {"water_cement": 42}}
    with pytest.raises(PriorFileError) as caught:
        parse_priors(doc, source="check")
    expected = str(caught.value)
    assert "field 'water_cement'" in expected
    for path in ("/api/preview", "/api/accept"):
        answer = client.post(path, {**RANGE, "units": 42}).json()
        assert answer["ok"] is False and list(answer["errors"]) == ["units"], answer
        assert expected.endswith(": " + answer["errors"]["units"])
    assert not out.exists() and _leftovers(out.parent) == []


def test_the_page_shows_the_datas_row_label(tmp_path):
    from elicit.columns_kind import column_kinds

    frame = __import__("pandas").read_csv(DEMO_CSV)
    notes = column_kinds(frame, "strength").notes()
    assert notes and notes[0].startswith("row label: batch")
    proc, address = start(command(DEMO_CSV, tmp_path / "p.toml"))
    try:
        assert Client(address).get("/api/state").json()["notes"] == list(notes)
    finally:
        stop(proc)


def test_the_browser_writes_the_model_it_was_given(tmp_path):
    # invented data: a row label, a categorical predictor and a column the formula leaves out
    data = tmp_path / "d.csv"
    data.write_text("plot,soil,x1,x2,y\nP1,clay,0.1,1,2.0\nP2,sand,0.4,2,3.1\nP3,clay,0.9,1,4.2\n"
                    "P4,loam,1.3,3,5.9\nP5,clay,1.8,2,6.1\nP6,sand,2.2,4,8.3\n")  # fmt: skip
    out = tmp_path / "priors.toml"
    formula = "y ~ x1 + soil"
    proc, address = start(command(data, out, "--formula", formula, "--reference", "soil=sand",
                                  response="y"))  # fmt: skip
    try:
        c = Client(address)
        state = c.get("/api/state").json()
        assert state["notes"] == ["row label: plot (all values distinct; not a predictor)",
                                  "not used: x2"]  # fmt: skip
        asked = {i["column"]: i["units_prompt"] for i in state["items"]}
        assert asked == {"x1": "Units of x1 (data: 0.1 to 2.2)", "soil[clay]": None,
                         "soil[loam]": None, "noise": None}  # fmt: skip
        level = {"column": "soil[clay]", "method": "range", "family": "normal", "low": "-1",
                 "high": "1", "mass": "0.9", "units": "ignored: a level has none"}  # fmt: skip
        answer = c.post("/api/accept", level).json()
        assert answer["ok"] is True
        said = "difference in y for soil[clay] against the reference level"
        assert answer["view"]["xlabel"] == said
        assert answer["view"]["restated"] == []  # no other change of an indicator
        x1 = {**RANGE, "column": "x1", "units": "kg", "low": "1", "high": "4"}
        assert c.post("/api/accept", x1).json()["ok"] is True
    finally:
        stop(proc)
    priors = read_prior_file(out)
    assert priors.model is not None and priors.model.formula == formula
    assert dict(priors.model.reference) == {"soil": "sand"}
    assert priors.units == {"x1": "kg"}
    (c,) = [c for c in priors.coefficients if c.column == "soil[clay]"]
    assert (c.statements[0].low, c.statements[0].high) == (-1.0, 1.0)


# --------------------------------------------------------------------------- conditional means

# The expected strength at the demo's five conditional-means reference rows (invented): lowest,
# highest, probability of that range.
ROW_RANGES = [("40", "50", "0.9"), ("33", "45", "0.9"), ("38", "50", "0.8"), ("42", "55", "0.9"),
              ("41", "52", "0.9")]  # fmt: skip
BLOCK = {"column": "conditional", "expert": "Engineer A", "rationale": "trial mixes (invented)",
         "rows": [{"low": lo, "high": hi, "mass": m} for lo, hi, m in ROW_RANGES]}  # fmt: skip


@pytest.fixture
def conditional(tmp_path):
    from dataclasses import replace

    with served(replace(study(tmp_path / "priors.toml"), conditional=True)) as s:
        yield s


def test_the_conditional_screen_lists_the_reference_rows(conditional):
    import pandas as pd

    state = Client(conditional.address).get("/api/state").json()
    assert [i["column"] for i in state["items"]] == ["conditional", "noise"]
    item = state["items"][0]
    predictors = ["water_cement", "fly_ash", "curing_temp", "superplasticizer"]
    assert item["names"] == ["intercept", *predictors]
    assert len(item["rows"]) == 5 and not item["answered"]  # k = terms + 1
    means = pd.read_csv(DEMO_CSV)[predictors].mean()
    assert item["rows"][0]["at"] == pytest.approx(means.to_dict(), rel=1e-12)
    for row, name in zip(item["rows"][1:], predictors, strict=True):
        others = {k: v for k, v in row["at"].items() if k != name}
        assert others == pytest.approx(means.drop(name).to_dict(), rel=1e-12)
        assert row["at"][name] != pytest.approx(means[name])  # its 90% quantile
        assert name in row["values"] and row["title"].startswith("Row ")


def test_the_conditional_block_is_the_terminal_ones(conditional, tmp_path):
    import numpy as np
    import pandas as pd

    from elicit.interview import Interview, terms_from_data

    client = Client(conditional.address)
    reply = client.post("/api/accept", BLOCK).json()
    assert reply["ok"], reply
    browser = read_prior_file(conditional.session.study.out).block
    # the terminal interview, the same statements typed (expert; each row's low, high, mass;
    # accept), the noise not asked
    typed = iter(["Engineer A", *(v for r in ROW_RANGES for v in r), "a"])
    frame = pd.read_csv(DEMO_CSV)
    out = tmp_path / "terminal.toml"

    def ask(prompt, type=None, default=None):
        value = next(typed)
        return type(value) if type in (float, str) else value

    Interview(out, "strength", ask, lambda text: None,
              frame=frame).run(terms_from_data(frame, "strength"), noise=False,
                               conditional=True)  # fmt: skip
    terminal = read_prior_file(out).block
    assert browser.names == terminal.names
    assert [r.at for r in browser.rows] == [r.at for r in terminal.rows]
    # both go through the same conversion: equal to rounding of the written numbers
    assert np.allclose(browser.mean, terminal.mean, rtol=1e-12, atol=0)
    assert np.allclose(browser.cov, terminal.cov, rtol=1e-12, atol=0)
    assert browser.rows[0].rationale == "trial mixes (invented)"
    # resumed: the screen is answered and shows the saved ranges; a second accept is refused
    item = client.get("/api/state").json()["items"][0]
    assert item["answered"] and item["rows"][1]["saved"] == {"low": 33, "high": 45, "mass": 0.9}
    assert client.post("/api/accept", BLOCK).status == 409


def test_a_bad_conditional_range_is_named_beside_its_field(conditional):
    out = conditional.session.study.out
    client = Client(conditional.address)
    bad = {**BLOCK, "rows": [dict(r) for r in BLOCK["rows"]]}
    bad["rows"][2]["high"] = "30"  # below its lowest (38)
    reply = client.post("/api/accept", bad).json()
    assert not reply["ok"] and list(reply["errors"]) == ["row2.high"]
    assert "low" in reply["errors"]["row2.high"]
    bad["rows"][2]["high"], bad["rows"][4]["mass"] = "50", "x"
    reply = client.post("/api/accept", bad).json()
    assert reply["errors"] == {"row4.mass": "not a number: 'x'"}
    assert client.post("/api/preview", bad).json()["errors"] == reply["errors"]
    assert not out.exists() and _leftovers(out.parent) == []


def test_the_command_serves_the_conditional_screen_and_resumes_it(tmp_path):
    out = tmp_path / "priors.toml"
    proc, address = start(command(DEMO_CSV, out, "--conditional", "--no-noise"))
    try:
        client = Client(address)
        (item,) = client.get("/api/state").json()["items"]
        assert item["column"] == "conditional" and len(item["rows"]) == 5
        assert client.post("/api/accept", BLOCK).json()["ok"] is True
    finally:
        proc.send_signal(signal.SIGKILL)
        stop(proc)
    assert len(read_prior_file(out).block.rows) == 5
    again, address = start(command(DEMO_CSV, out, "--conditional", "--no-noise"))
    try:
        (item,) = Client(address).get("/api/state").json()["items"]
        assert item["answered"] and item["rationale"] == "trial mixes (invented)"
    finally:
        stop(again)
