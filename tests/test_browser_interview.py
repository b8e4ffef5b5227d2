"""The browser interview in headless Chromium (Debian's, driven by playwright's Python package
with ``executable_path``; no browser is downloaded): the demo study's coefficients stated by the
three methods, the server killed between answers and resumed, the requests the page makes, the
keyboard, and the facilitator's overlay.

Waits are playwright's own (a locator's state or text), never sleeps.
"""

from __future__ import annotations

import signal

import numpy as np
import pytest
from browser_helpers import DEMO_CSV, command, start, stop
from scipy import optimize, stats

from elicit.read import read_prior_file

pytestmark = pytest.mark.browser
sync_api = pytest.importorskip("playwright.sync_api", reason="playwright (the test extra)")
expect = sync_api.expect

WAIT_MS = 60_000  # a guard against hanging on a loaded machine, not a timing check
# the cumulative-probability fits solve a smooth least-squares problem to ~1e-12 in the
# residual, so their parameters agree with another solver's to about 1e-6 relative
RTOL = 1e-6


@pytest.fixture(scope="module")
def browser(chromium):
    with sync_api.sync_playwright() as p:
        b = p.chromium.launch(executable_path=chromium, args=["--no-sandbox", "--disable-gpu"])
        yield b
        b.close()


class Page:
    """One tab with every request it makes and every error it logs recorded."""

    def __init__(self, browser, width=1280):
        self.context = browser.new_context(viewport={"width": width, "height": 900})
        self.page = self.context.new_page()
        self.page.set_default_timeout(WAIT_MS)
        self.requests: list[str] = []
        self.errors: list[str] = []
        self.page.on("request", lambda r: self.requests.append(r.url))
        self.page.on("pageerror", lambda e: self.errors.append(str(e)))
        self.page.on("console", lambda m: m.type == "error" and self.errors.append(m.text))

    def open(self, address):
        self.page.goto(address)
        expect(self.page.locator("#item-list li")).to_have_count(5)  # 4 slopes and the noise
        return self.page

    def close(self):
        self.context.close()


def _state(page, column, text):
    button = page.locator("#item-list button", has_text=column)
    expect(button.locator(".state")).to_have_text(text)


def _accept(page):
    page.click("#accept")
    expect(page.locator("#saved-note")).to_have_text("Saved in the prior file.")


def _server(out, *extra):
    return start(command(DEMO_CSV, out, "--response-units", "MPa", *extra))


def _reference_fit(cdf, pairs):
    """scipy.optimize.least_squares on F(v; m, s) - p over (m, s), s > 0 (independent of the
    project's solver)."""
    p = np.array([a for a, _ in pairs])
    v = np.array([b for _, b in pairs])
    found = optimize.least_squares(lambda t: cdf(v, loc=t[0], scale=t[1]) - p, [0.0, 1.0],
                                   bounds=([-np.inf, 1e-12], [np.inf, np.inf]), method="trf",
                                   xtol=1e-15, ftol=1e-15, gtol=1e-15)  # fmt: skip
    return found.x


def test_three_methods_with_the_server_killed_between_answers(browser, tmp_path):
    out = tmp_path / "priors.toml"
    tab = Page(browser)
    origins = []
    proc, address = _server(out, "--expert", "Engineer A")
    try:
        origins.append(address.split("/?")[0])
        page = tab.open(address)
        expect(page.locator("#q-title")).to_have_text("water_cement")
        # 1. a range and its probability: 90% sure that 0.1 more water/cement changes the
        #    strength by -9 to -3 MPa (invented)
        # its units first, asked once with the data's range (the terminal interview's question)
        expect(page.locator("#units-label")).to_contain_text("Units of water_cement (data: ")
        page.fill("#units", "ratio")
        page.fill("#per", "0.1")
        page.fill("#low", "-9")
        page.fill("#high", "-3")
        page.fill("#rationale", "more water, weaker paste")
        expect(page.locator("#words")).to_contain_text("Median change in strength per 0.1 ratio")
        shown = page.locator("#words pre").inner_text()
        _accept(page)
        assert read_prior_file(out).get("water_cement") is not None  # saved at once
    finally:
        proc.send_signal(signal.SIGKILL)
        stop(proc)

    proc, address = _server(out)  # a new server, a new token: the page resumes from the file
    try:
        origins.append(address.split("/?")[0])
        page = tab.open(address)
        expect(page.locator("#q-title")).to_have_text("fly_ash")
        _state(page, "water_cement", "saved")
        expect(page.locator("#expert")).to_have_value("Engineer A")
        # 2. quantiles: 5%, 50% and 95% of the change per 0.1 of fly ash, not symmetric
        page.check("input[name=method][value=quantiles]")
        page.select_option("#quantile_set", "wide")
        expect(page.locator("#q0-label")).to_have_text("5% quantile")
        page.fill("#per", "0.1")
        page.fill("#q0", "-3")
        page.fill("#q1", "-1")
        page.fill("#q2", "2")
        expect(page.locator("#words")).to_contain_text("misses your stated cumulative")
        _accept(page)
    finally:
        proc.send_signal(signal.SIGKILL)
        stop(proc)

    proc, address = _server(out)
    try:
        origins.append(address.split("/?")[0])
        page = tab.open(address)
        expect(page.locator("#q-title")).to_have_text("curing_temp")
        # 3. chips and bins: 20 chips in 4 bins of the change per 5 degrees of curing
        page.check("input[name=method][value=bins]")
        page.fill("#per", "5")
        page.fill("#bin_low", "-1")
        page.fill("#bin_high", "3")
        page.fill("#bin_count", "4")
        expect(page.locator("#board .bin")).to_have_count(4)
        for i, n in enumerate([3, 8, 6, 3]):
            for _ in range(n):
                page.locator("#board .bin").nth(i).locator(".add").click()
        expect(page.locator("#chips-left")).to_have_text("Chips left to place: 0 of 20")
        expect(page.locator("#board .bin").nth(1).locator(".count")).to_have_text("8")
        expect(page.locator("#words")).to_contain_text("misses your stated cumulative")
        # nothing typed yet in the units: none in the labels
        expect(page.locator("#chart-caption")).to_contain_text("per 5 of curing_temp")
        page.locator("#units").press_sequentially("°C")
        expect(page.locator("#chart-caption")).to_contain_text("per 5 °C of curing_temp (MPa)")
        _accept(page)
        _state(page, "curing_temp", "saved")
        expect(page.locator("#units-row")).to_be_hidden()  # saved: not asked again
        expect(page.locator("#per-label")).to_contain_text("(°C)")
        # the summary lists the three priors with their pictures and the file's show text
        page.click("#to-summary")
        expect(page.locator("#summary-cards .card")).to_have_count(3)
        expect(page.locator("#summary-cards svg path.fit")).to_have_count(3)
        expect(page.locator("#summary-path")).to_have_text(str(out.resolve()))
        expect(page.locator("#summary-show")).to_contain_text("curing_temp")
    finally:
        stop(proc)

    priors = read_prior_file(out)
    assert priors.units == {"water_cement": "ratio", "curing_temp": "°C"}
    wc, fa, ct = (priors.get(c) for c in ("water_cement", "fly_ash", "curing_temp"))
    (s,) = wc.statements
    assert (s.low, s.high, s.mass, s.per, s.family) == (-9.0, -3.0, 0.9, 0.1, "normal")
    assert s.expert == "Engineer A" and s.rationale == "more water, weaker paste"
    # a central 90% range of a normal: centre at the middle, sd = half-width / z(0.95)
    # (scipy.stats.norm.ppf, reference)
    assert wc.center == pytest.approx(-6.0 / 0.1, rel=1e-12)
    assert wc.scale == pytest.approx(3.0 / stats.norm.ppf(0.95) / 0.1, rel=1e-9)
    # the quantiles and the chips: least squares on the stated cumulative probabilities
    (q,) = fa.statements
    assert sorted(q.quantiles) == [(0.05, -3.0), (0.5, -1.0), (0.95, 2.0)]
    m, sd = _reference_fit(stats.norm.cdf, [(0.05, -3.0), (0.5, -1.0), (0.95, 2.0)])
    assert fa.center == pytest.approx(m / 0.1, rel=RTOL)
    assert fa.scale == pytest.approx(sd / 0.1, rel=RTOL)
    (b,) = ct.statements
    assert list(b.bins) == [-1.0, 0.0, 1.0, 2.0, 3.0] and list(b.chips) == [3, 8, 6, 3]
    # cumulative proportions at the inner edges, computed here: 3/20, 11/20, 17/20
    m, sd = _reference_fit(stats.norm.cdf, [(0.15, 0.0), (0.55, 1.0), (0.85, 2.0)])
    assert ct.center == pytest.approx(m / 5, rel=RTOL)
    assert ct.scale == pytest.approx(sd / 5, rel=RTOL)
    # the page showed the statement as `elicit show` puts it
    from click.testing import CliRunner

    from elicit.cli import main

    run = CliRunner().invoke(main, ["show", str(out)])
    assert run.exit_code == 0, run.output
    assert shown.splitlines()[0] in run.output.splitlines()

    # every request went to the server it was served from, and nothing failed in the page
    assert tab.requests and all(any(u.startswith(o + "/") for o in origins) for u in tab.requests)
    assert tab.errors == []
    tab.close()


def test_keyboard_reaches_every_field_and_every_field_is_labelled(browser, tmp_path):
    proc, address = _server(tmp_path / "priors.toml")
    tab = Page(browser)
    try:
        page = tab.open(address)
        unlabelled = page.evaluate(
            """() => Array.from(document.querySelectorAll("input, select, textarea, button"))
                .filter(n => !(n.labels && n.labels.length) && !n.getAttribute("aria-label")
                             && !n.textContent.trim())
                .map(n => n.id || n.outerHTML.slice(0, 80))"""
        )
        assert unlabelled == []
        reached = set()
        page.locator("body").focus()
        for _ in range(40):
            page.keyboard.press("Tab")
            reached.add(
                page.evaluate("() => document.activeElement.id || document.activeElement.name")
            )
        for field in ("expert", "to-summary", "method", "family", "per", "low", "high", "mass",
                      "rationale", "accept"):  # fmt: skip
            assert field in reached, (field, reached)
        # the chips are placed with the keyboard too
        page.focus("input[name=method][value=range]")
        page.keyboard.press("ArrowRight")
        page.keyboard.press("ArrowRight")
        expect(page.locator("#bins-set")).to_be_visible()
        page.focus("#bin_low")
        page.keyboard.type("-10")
        page.keyboard.press("Tab")
        page.keyboard.type("-2")
        expect(page.locator("#board .bin")).to_have_count(8)
        page.locator("#board .bin").nth(0).locator(".add").focus()
        page.keyboard.press("Enter")
        page.keyboard.press("Space")
        expect(page.locator("#board .bin").nth(0).locator(".count")).to_have_text("2")
        expect(page.locator("#chips-left")).to_have_text("Chips left to place: 18 of 20")
        assert tab.errors == []
    finally:
        tab.close()
        stop(proc)


def test_the_other_experts_appear_only_after_answering(browser, tmp_path):
    other = tmp_path / "other.toml"
    other.write_text('[study]\nresponse = "strength"\n[[coefficient]]\nname = "water_cement"\n'
                     'family = "normal"\nlow = -6\nhigh = -1\nmass = 0.9\nper = 0.1\n'
                     'expert = "Engineer B"\n')  # fmt: skip
    proc, address = _server(tmp_path / "priors.toml", "--others", str(other))
    tab = Page(browser)
    try:
        page = tab.open(address)
        page.fill("#per", "0.1")
        page.fill("#low", "-9")
        page.fill("#high", "-3")
        expect(page.locator("#words")).to_contain_text("Median change in strength")
        expect(page.locator("#others-box")).to_be_hidden()  # before: against anchoring
        assert "Engineer B" not in page.locator("#chart").text_content()
        _accept(page)
        expect(page.locator("#others-box")).to_be_visible()
        page.check("#others-switch")
        expect(page.locator("#others-words")).to_contain_text("Linear pool of 2 statements")
        expect(page.locator("#chart")).to_contain_text("Engineer B")
        expect(page.locator("#chart")).to_contain_text("linear pool")
        page.uncheck("#others-switch")
        expect(page.locator("#chart")).not_to_contain_text("Engineer B")
        others = [u for u in tab.requests if "/api/others" in u]
        assert len(others) == 1  # asked once, after the answer
        assert tab.errors == []
    finally:
        tab.close()
        stop(proc)


# the layout at a projector's or a small laptop's width: nothing runs past the window, the
# statement's column never reaches under the pictures, the chart's type is drawn at least 12 px,
# the bins stand on one floor
LAYOUT = """() => {
  const form = document.querySelector("#statement").getBoundingClientRect();
  const board = document.querySelector("#board").getBoundingClientRect();
  const feedback = document.querySelector(".feedback").getBoundingClientRect();
  const ticks = Array.from(document.querySelectorAll("#chart text"))
    .map(t => t.getBoundingClientRect().height).filter(h => h > 0);
  const floors = new Set(Array.from(document.querySelectorAll("#board .stack"))
    .map(n => Math.round(n.getBoundingClientRect().bottom)));
  return {floors: floors.size, page: document.documentElement.scrollWidth,
          window: window.innerWidth,
          form: form.right, board: board.right, feedback: feedback.left,
          stacked: feedback.top >= form.bottom, type: Math.min(...ticks)};
}"""


@pytest.mark.parametrize("width", [1280, 800])
def test_the_page_fits_the_window(browser, tmp_path, width):
    proc, address = _server(tmp_path / "priors.toml")
    tab = Page(browser, width=width)
    try:
        page = tab.open(address)
        page.check("input[name=method][value=bins]")
        page.fill("#bin_low", "-10")
        page.fill("#bin_high", "-2")
        page.fill("#bin_count", "12")
        expect(page.locator("#board .bin")).to_have_count(12)
        for i in range(12):
            page.locator("#board .bin").nth(i).locator(".add").click()
        page.locator("#board .bin").nth(5).locator(".add").click(click_count=8)
        expect(page.locator("#chips-left")).to_have_text("Chips left to place: 0 of 20")
        expect(page.locator("#chart path.fit")).to_have_count(1)
        found = page.evaluate(LAYOUT)
        assert found["page"] <= found["window"], found
        assert found["board"] <= found["form"] + 0.5, found
        assert found["stacked"] or found["form"] <= found["feedback"], found
        assert found["type"] >= 12, found
        assert found["floors"] == 1, found  # every bin's chips stand on one line
        assert tab.errors == []
    finally:
        tab.close()
        stop(proc)


def test_the_conditional_screen_states_a_range_at_each_reference_row(browser, tmp_path):
    # the expected strength at the five reference rows (invented)
    ranges = [("40", "50"), ("33", "45"), ("38", "50"), ("42", "55"), ("41", "52")]
    out = tmp_path / "priors.toml"
    tab = Page(browser, width=800)
    proc, address = _server(out, "--conditional", "--no-noise", "--expert", "Engineer A")
    try:
        page = tab.page
        page.goto(address)
        expect(page.locator("#rows-set fieldset")).to_have_count(5)
        expect(page.locator("#rows-set legend").nth(1)).to_contain_text("water_cement = ")
        expect(page.locator("label[for='row0.low']")).to_have_text(
            "Lowest plausible expected strength (in MPa) at row 1"
        )
        for i, (low, high) in enumerate(ranges):
            page.fill(f"#row{i}\\.low", low)
            page.fill(f"#row{i}\\.high", "30" if i == 2 else high)  # row 3's below its lowest
        expect(page.locator("#err-row2\\.high")).to_contain_text("must be above low")
        expect(page.locator("#row2\\.high")).to_have_attribute("aria-invalid", "true")
        page.click("#accept")
        expect(page.locator("#status")).to_contain_text("Not saved")
        assert not out.exists()
        page.fill("#row2\\.high", "50")
        expect(page.locator("#words pre")).to_contain_text("correlated normal")
        _accept(page)
        block = read_prior_file(out).block
        assert [(r.low, r.high) for r in block.rows] == [(float(a), float(b)) for a, b in ranges]
        assert {r.expert for r in block.rows} == {"Engineer A"}
        page.reload()  # resumed: the saved ranges shown, not editable
        expect(page.locator("#row1\\.low")).to_have_value("33")
        expect(page.locator("#row1\\.low")).to_be_disabled()
        assert tab.errors == []
    finally:
        tab.close()
        stop(proc)
