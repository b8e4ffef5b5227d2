"""The demo report in a real browser: headless Chromium decodes every image, logs no error.

Chromium is the Debian package ``chromium``. Where it is missing and the tests run as root with
apt-get available (a CI container), the session fixture installs it; elsewhere the tests are
skipped with the reason. No browser is downloaded by any other route.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

pytestmark = pytest.mark.browser

CHROMIUM = "/usr/bin/chromium"
FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--host-resolver-rules=MAP * ~NOTFOUND",  # any network fetch fails and shows up as an error
    "--enable-logging=stderr",
    "--v=0",
    "--virtual-time-budget=10000",  # let the page finish loading before the dump/screenshot
]

# Injected into a copy of the report: records script errors, failed resources (capture phase)
# and console.error calls from the very start, then, on load, writes the result into the DOM
# where --dump-dom prints it.
CHECK_SCRIPT = """<script>
window.__errors = [];
window.addEventListener("error", function (e) {
  var t = e.target;
  window.__errors.push(t && t !== window ? "failed to load " + (t.src || t.href) : e.message);
}, true);
var __consoleError = console.error;
console.error = function () {
  window.__errors.push(Array.prototype.join.call(arguments, " "));
  __consoleError.apply(console, arguments);
};
window.addEventListener("load", function () {
  var images = Array.prototype.map.call(document.images, function (img) {
    return {alt: img.alt.slice(0, 40), complete: img.complete, width: img.naturalWidth};
  });
  var pre = document.createElement("pre");
  pre.id = "__check";
  pre.textContent = JSON.stringify({images: images, errors: window.__errors});
  document.body.appendChild(pre);
});
</script>"""


def _install_chromium() -> str | None:
    """Install the Debian package where possible; return why not, or None on success."""
    if not hasattr(os, "geteuid") or os.geteuid() != 0:
        return "not root, cannot apt-get install chromium"
    if shutil.which("apt-get") is None:
        return "no apt-get on this system"
    try:
        for cmd in (["apt-get", "update"], ["apt-get", "install", "-y", "chromium"]):
            subprocess.run(cmd, check=True, capture_output=True, timeout=900,
                           env={**os.environ, "DEBIAN_FRONTEND": "noninteractive"})  # fmt: skip
    except (subprocess.SubprocessError, OSError) as e:
        return f"apt-get install chromium failed: {e}"
    return None if Path(CHROMIUM).exists() else "chromium still missing after apt-get"


@pytest.fixture(scope="session")
def chromium() -> str:
    if not Path(CHROMIUM).exists():
        reason = _install_chromium()
        if reason:
            pytest.skip(f"headless Chromium unavailable: {reason}")
    return CHROMIUM


@pytest.fixture(scope="module")
def demo_report(tmp_path_factory) -> tuple[Path, int]:
    """The demo's report.html, and how many figures it embeds."""
    from bayes.demo.run import run_demo

    out = tmp_path_factory.mktemp("demo")
    run_demo(out, echo=lambda _: None)
    html = out / "report.html"
    return html, len(re.findall(r'<img src="data:image/png;base64,', html.read_text()))


def _run(chromium: str, profile: Path, args: list[str], page: Path):
    return subprocess.run(
        [chromium, *FLAGS, f"--user-data-dir={profile}", *args, page.as_uri()],
        capture_output=True, text=True, timeout=180, cwd=profile.parent,
    )  # fmt: skip


def _console_lines(stderr: str) -> list[str]:
    return [line for line in stderr.splitlines() if ":CONSOLE" in line]


def _check(chromium: str, page_text: str, folder: Path) -> tuple[dict, list[str]]:
    """Load a copy of the page with CHECK_SCRIPT; return its findings and the console lines."""
    checked = folder / "checked.html"
    checked.write_text(page_text.replace("<head>", "<head>\n" + CHECK_SCRIPT, 1))
    run = _run(chromium, folder / "profile-dom", ["--dump-dom"], checked)
    assert run.returncode == 0, run.stderr[-2000:]
    found = re.search(r'<pre id="__check">(.*?)</pre>', run.stdout, re.S)
    assert found, "the check script did not run: " + run.stdout[-500:]
    result = json.loads(found.group(1).replace("&quot;", '"').replace("&amp;", "&"))
    return result, _console_lines(run.stderr)


def test_the_check_catches_a_broken_image_and_console_errors(chromium, tmp_path):
    page = (
        "<!DOCTYPE html><html><head><title>t</title></head><body>"
        '<img src="data:image/png;base64,AAAA" alt="broken">'
        '<img src="https://example.invalid/x.png" alt="external">'
        '<script>console.error("boom")</script></body></html>'
    )
    result, console = _check(chromium, page, tmp_path)
    assert [image["width"] for image in result["images"]] == [0, 0]
    assert "boom" in result["errors"]
    assert any("example.invalid" in e for e in result["errors"])
    assert any("boom" in line for line in console)


def test_demo_report_renders_with_every_image_decoded(chromium, demo_report, tmp_path):
    html, n_figures = demo_report
    assert n_figures == 5
    result, console = _check(chromium, html.read_text(), tmp_path)
    assert len(result["images"]) == n_figures
    for image in result["images"]:
        assert image["complete"] and image["width"] > 0, image
    assert result["errors"] == []
    assert console == []


def test_demo_report_screenshot_without_console_errors(chromium, demo_report, tmp_path):
    html, _ = demo_report
    shot = tmp_path / "report.png"
    args = [f"--screenshot={shot}", "--window-size=1200,4000", "--hide-scrollbars"]
    run = _run(chromium, tmp_path / "profile-shot", args, html)
    assert run.returncode == 0, run.stderr[-2000:]
    assert _console_lines(run.stderr) == []
    png = shot.read_bytes()
    assert png.startswith(b"\x89PNG\r\n\x1a\n")
    width, height = int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big")
    assert (width, height) == (1200, 4000)
