"""A report's files are replaced as one set: a run killed while writing or renaming leaves the
old set or, after the next run, the new one; never a mix, never our temporary files."""

from __future__ import annotations

import os

import pytest

from bayes.report.document import Figure, Paragraph, Report, Section, Table
from bayes.report.render import write_report
from elicit import outputs
from elicit.outputs import recover_set, write_set


class Killed(BaseException):
    """Stands for the process being killed: no cleanup runs after it."""


def _report(version: str) -> Report:
    version = f"release-{version}-mark"  # a token no template text holds
    png = b"\x89PNG\r\n\x1a\n" + version.encode()
    blocks = (Paragraph(f"version {version}"),
              Table("summary", "caption", ("a", "b"), (("1", version),)),
              Figure("fig", "a figure", png))  # fmt: skip
    return Report(f"Report {version}", "subtitle", (Section("s", "Section", blocks),))


def _paths(tmp_path):
    return {"html": tmp_path / "r.html", "markdown": tmp_path / "md" / "r.md",
            "csv_dir": tmp_path / "tables"}  # fmt: skip


def _versions(tmp_path) -> set[str]:
    """Which report version each output file holds."""
    p = _paths(tmp_path)
    files = [p["html"], p["markdown"], p["markdown"].with_name("r-fig.png"),
             p["csv_dir"] / "summary.csv"]  # fmt: skip
    return {("new" if b"release-new-mark" in f.read_bytes() else "old") for f in files}


def _ours(tmp_path) -> list[str]:
    """Every hidden file under tmp_path (temporary files and journals are hidden)."""
    return sorted(p.name for p in tmp_path.rglob(".*"))


def _kill_at(monkeypatch, nth):
    real, calls = os.replace, []

    def replace(src, dst):
        calls.append(dst)
        if len(calls) == nth:
            raise Killed
        real(src, dst)

    monkeypatch.setattr(outputs.os, "replace", replace)
    monkeypatch.setattr(outputs.Path, "unlink", lambda *a, **k: None)  # no cleanup after a kill
    return calls


@pytest.mark.parametrize("nth", range(1, 9))  # 4 journals, then 4 renames
def test_a_report_killed_at_any_rename_is_old_or_recovered_whole(tmp_path, monkeypatch, nth):
    write_report(_report("old"), **_paths(tmp_path))
    assert _versions(tmp_path) == {"old"}
    with monkeypatch.context() as m:
        _kill_at(m, nth)
        with pytest.raises(Killed):
            write_report(_report("new"), **_paths(tmp_path))
    p = _paths(tmp_path)
    recover_set([p["html"]])  # what the next run does first, for any one of its targets
    assert _versions(tmp_path) == ({"old"} if nth == 1 else {"new"})
    write_report(_report("new"), **_paths(tmp_path))
    assert _versions(tmp_path) == {"new"} and _ours(tmp_path) == []


def test_an_error_before_the_commit_changes_nothing(tmp_path):
    first = tmp_path / "a.txt"
    first.write_text("old")
    with pytest.raises(OSError):  # the second file's folder is missing: no temporary file
        write_set({first: b"new", tmp_path / "gone" / "b.txt": b"new"})
    assert first.read_text() == "old" and _ours(tmp_path) == []


def test_leftovers_of_a_killed_run_are_removed_but_not_the_users_files(tmp_path):
    target = tmp_path / "r.html"
    ours = [tmp_path / ".r.html.k3j4_h5g.tmp.html"]
    users = [tmp_path / ".r.html.notes.tmp.html", tmp_path / ".r.html.k3j4h5g6.tmp.md",
             tmp_path / "r.html.k3j4h5g6.tmp.html"]  # fmt: skip
    for p in [*ours, *users]:
        p.write_text("x")
    write_set({target: b"<html></html>"})
    assert not any(p.exists() for p in ours) and all(p.exists() for p in users)
