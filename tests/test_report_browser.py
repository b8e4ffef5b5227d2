"""The demo report in a real browser: headless Chromium decodes every image, logs no error.

Chromium is the Debian package ``chromium``. Where it is missing and the tests run as root with
apt-get available (a CI container), the session fixture installs it; elsewhere the tests are
skipped with the reason. No browser is downloaded by any other route.
"""

from __future__ import annotations

import json
import re
import subprocess
from pathlib import Path

import pytest
from system_tools import install

pytestmark = pytest.mark.browser

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


# --------------------------------------------------------------------------- printed width

# Printable width at 96 CSS px per inch with the report's 15 mm side margins (common practice:
# A4 is 210 mm wide, US Letter 8.5 in = 215.9 mm).
PRINTABLE_PX = {"A4": (210.0 - 30.0) / 25.4 * 96, "Letter": (215.9 - 30.0) / 25.4 * 96}

# Forces the print rules onto the screen (the page is laid out as printed, at the window's
# width), then records every table and figure wider than the body.
WIDTH_SCRIPT = """<script>
window.addEventListener("load", function () {
  var body = document.body.getBoundingClientRect();
  var wide = [];
  document.querySelectorAll("table, figure img, .formula").forEach(function (el) {
    var r = el.getBoundingClientRect();
    var out = r.right > body.right + 0.5 || r.left < body.left - 0.5;
    if (out || el.scrollWidth > el.clientWidth + 1)
      wide.push((el.id || el.className || el.tagName) + " " + Math.round(r.width));
  });
  var pre = document.createElement("pre");
  pre.id = "__width";
  pre.textContent = JSON.stringify({body: body.width, wide: wide,
                                    tables: document.querySelectorAll("table").length});
  document.body.appendChild(pre);
});
</script>"""


@pytest.fixture(scope="module")
def field_trial_report(tmp_path_factory) -> Path:
    """The invented field trial's report: long rationales, a factor, two agronomists."""
    import pandas as pd

    import bayes
    from bayes.report.build import build_report
    from bayes.report.render import write_report
    from bayes.store import save_fit

    data = Path(__file__).parent / "data" / "field_trial"
    frame = pd.read_csv(data / "trial.csv")
    fit = bayes.fit(frame, "yield", None, priors=bayes.load_priors(data / "priors.toml"),
                    formula="`yield` ~ nitrogen + irrigation + sowing_day + C(soil)")  # fmt: skip
    out = tmp_path_factory.mktemp("field")
    folder = save_fit(fit, out / "fit")
    html = out / "report.html"
    write_report(build_report(folder), html=html)
    return html


def _widths(chromium: str, html: Path, folder: Path, width_px: float) -> dict:
    text = html.read_text().replace("@media print {", "@media all {", 1)
    page = folder / "printed.html"
    page.write_text(text.replace("<head>", "<head>\n" + WIDTH_SCRIPT, 1))
    size = f"--window-size={int(width_px)},3000"
    run = _run(chromium, folder / "profile-width", ["--dump-dom", size], page)
    assert run.returncode == 0, run.stderr[-2000:]
    found = re.search(r'<pre id="__width">(.*?)</pre>', run.stdout, re.S)
    assert found, "the width script did not run: " + run.stdout[-500:]
    return json.loads(found.group(1).replace("&quot;", '"').replace("&amp;", "&"))


@pytest.mark.parametrize("paper", sorted(PRINTABLE_PX))
@pytest.mark.parametrize("which", ["demo", "field trial"])
def test_no_table_or_figure_is_wider_than_the_printed_page(chromium, demo_report,
                                                           field_trial_report, tmp_path,
                                                           paper, which):  # fmt: skip
    html = demo_report[0] if which == "demo" else field_trial_report
    found = _widths(chromium, html, tmp_path, PRINTABLE_PX[paper])
    assert found["tables"] > 5
    assert abs(found["body"] - int(PRINTABLE_PX[paper])) < 20  # laid out at the page's width
    assert found["wide"] == []


def test_the_width_check_sees_a_table_that_is_too_wide(chromium, tmp_path):
    cells = "".join(f"<td>{'unbreakable' * 3}{i}</td>" for i in range(12))
    page = tmp_path / "wide.html"
    page.write_text("<!DOCTYPE html><html><head><title>t</title><style>@media print {}</style>"
                    f"</head><body><table><tr>{cells}</tr></table><table></table>"
                    + "<table></table>" * 5 + "</body></html>")  # fmt: skip
    found = _widths(chromium, page, tmp_path, PRINTABLE_PX["A4"])
    assert found["wide"], found


@pytest.mark.parametrize("which", ["demo", "field trial"])
def test_printed_from_the_browser_every_heading_and_number_is_on_the_page(
    chromium, demo_report, field_trial_report, tmp_path, which
):
    pdftotext = "/usr/bin/pdftotext"
    reason = install(pdftotext, "poppler-utils")
    if reason:
        pytest.skip(f"pdftotext unavailable: {reason}")
    html = demo_report[0] if which == "demo" else field_trial_report
    pdf = tmp_path / "printed.pdf"
    args = [f"--print-to-pdf={pdf}", "--no-pdf-header-footer"]
    run = _run(chromium, tmp_path / "profile-pdf", args, html)
    assert run.returncode == 0 and pdf.exists(), run.stderr[-2000:]
    text = subprocess.run([pdftotext, "-layout", str(pdf), "-"], capture_output=True,
                          text=True, check=True).stdout  # fmt: skip
    page = html.read_text()
    for title in re.findall(r"<h2>(.*?)</h2>", page):
        assert title.replace("&#39;", "'") in text, title
    for label in re.findall(r"<b>((?:Table|Figure) \d+)\.</b>", page):
        assert label + "." in text, label
