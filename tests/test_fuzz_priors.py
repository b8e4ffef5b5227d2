"""Fuzzing the prior file (issue 18): structured documents from the format (elicit.read,
elicit.validate, elicit.fields) with extreme and wrong values, mutated files and deep nesting,
run through ``elicit show`` and ``bayes fit`` on a small invented data set. Every run must end
with exit status 0 or 2, no traceback, one-line warnings and at most one error line, within
the deadline of ``fuzz_helpers.FUZZ``."""

from __future__ import annotations

import json

import pytest
from fuzz_helpers import (
    FAST_SAMPLER,
    extreme_floats,
    floats,
    fuzz,
    huge_ints,
    run_cli,
    texts,
    toml_text,
    wrong,
)
from hypothesis import event, given
from hypothesis import strategies as st

from bayes.cli.app import main as bayes_main
from elicit.cli import main as elicit_main

# Invented data: two predictors and a response.
DATA = (
    "x1,x2,y\n0.1,1,2.0\n0.4,2,3.1\n0.9,1,4.2\n1.3,3,5.9\n1.8,2,6.1\n2.2,4,8.3\n2.5,3,8.8\n"
    "3.0,5,10.9\n"
)
VALID = """[study]
title = "Invented fuzz study"
response = "y"
response_units = "kN"

[units]
x1 = "m"

[noise]
low = 0.1
high = 2.0
mass = 0.9

[[coefficient]]
name = "x1"
low = 1.0
high = 4.0
mass = 0.9
expert = "engineer A"

[[coefficient]]
name = "x1"
family = "normal"
quantiles = [[0.05, 1.5], [0.5, 2.5], [0.95, 3.5]]
expert = "engineer B"

[[coefficient]]
name = "x2"
family = "laplace"
center = 0.5
scale = 0.3

[[reference_row]]
label = "typical"
x1 = 1.0
x2 = 2.0
"""


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    path = tmp_path_factory.mktemp("fuzz_priors")
    (path / "d.csv").write_text(DATA)
    return path


def _run_both(folder, text: str, fmt: str = "json", *, events: bool = True) -> None:
    priors = folder / "p.toml"
    priors.write_bytes(text.encode("utf-8", errors="surrogatepass"))
    shown = run_cli(elicit_main, ["show", priors, "--data", folder / "d.csv", "--format", fmt],
                    prefix="elicit: ")  # fmt: skip
    fitted = run_cli(bayes_main, ["fit", folder / "d.csv", "--response", "y", "--priors", priors,
                                  "--format", fmt, *FAST_SAMPLER], prefix="error: ")  # fmt: skip
    if events:  # hypothesis' statistics: how many runs get past the validator
        event(f"show exit {shown.exit_code}, fit exit {fitted.exit_code}")
    if fmt == "json":
        for result in (shown, fitted):
            if result.exit_code == 0:  # strict JSON: no NaN or Infinity
                json.loads(result.stdout, parse_constant=lambda c: pytest.fail(f"{c} in JSON"))


# ----- structured documents from the prior-file format -----

# Values of a well-formed file: plausible ones, and extremes the validator accepts
# (elicit.limits), so that the engines see them; then a few leaves are corrupted.
plausible = st.floats(-5, 5, allow_nan=False).map(lambda v: round(v, 3))
edges = st.sampled_from([1e100, -1e100, 9.99e99, 1e50, -1e50, 1e20, 1e-20, 1e-50, 1e-99, 0.0])
tiny_or_huge = st.sampled_from([1e-100, 1.01e-100, 1e-99, 1e-50, 1e-20, 1e20, 1e50, 9.99e99, 1e100])
numbers = st.one_of(plausible, plausible, plausible, plausible, edges)
positive = st.one_of(st.floats(0.01, 10).map(lambda v: round(v, 3)), tiny_or_huge)
masses = st.one_of(st.sampled_from([0.5, 0.8, 0.9, 0.95, 0.99]), st.sampled_from([1e-9, 1 - 1e-9]))
texts_ok = st.sampled_from(["engineer A", "site \u00e9\U0001f600", "kN", ""]) | texts
names = st.sampled_from(["x1", "x1", "x1", "x2", "x2", "x2", "intercept", "y", "\u00e9\U0001f600"])
families = st.sampled_from(["normal", "normal", "laplace", "student_t", "flat"])
corrupt_values = st.one_of(extreme_floats, floats, huge_ints, wrong)


def _above(low: float, step: float) -> float:
    """A number above ``low`` (stays within elicit.limits when low does)."""
    high = low + step
    return high if high > low and abs(high) <= 1e100 else low + abs(low) * 0.5 + 1.0


@st.composite
def statements(draw) -> dict:
    family = draw(families)
    s = {"family": family} if family != "normal" or draw(st.booleans()) else {}
    odd = draw(st.integers(0, 19)) == 0  # a flat prior with a range, two modes, none
    mode = "none" if family == "flat" else draw(st.sampled_from(["range", "quantiles", "center"]))
    if odd:
        mode = draw(st.sampled_from(["range", "none", "several"]))
    if mode in ("range", "several"):
        low = draw(numbers)
        s.update(low=low, high=_above(low, draw(positive)), mass=draw(masses))
    if mode in ("quantiles", "several"):
        probs = sorted(draw(st.sets(st.sampled_from([0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95]),
                                    min_size=2, max_size=4)))  # fmt: skip
        values = [draw(numbers)]
        for _ in probs[1:]:
            values.append(_above(values[-1], draw(positive)))
        s["quantiles"] = [[p, v] for p, v in zip(probs, values, strict=True)]
    if mode == "center":
        s.update(center=draw(numbers), scale=draw(positive))
    if mode in ("range", "quantiles") and draw(st.integers(0, 3)) == 0:
        s["per"] = draw(positive)
    if family == "student_t" and draw(st.booleans()):
        s["df"] = draw(st.one_of(st.sampled_from([1.0, 2.0, 2.5, 30.0]), positive))
    for key, values in (("weight", positive), ("expert", texts_ok), ("rationale", texts_ok)):
        if draw(st.integers(0, 4)) == 0:
            s[key] = draw(values)
    return s


@st.composite
def coefficient_entries(draw) -> dict:
    entry = {"name": draw(names)}
    if draw(st.integers(0, 7)) == 0:
        entry["level"] = draw(texts_ok)
    if draw(st.integers(0, 5)) == 0:  # a pooled entry, as elicit pool writes it
        entry.update(family=draw(families), center=draw(numbers), scale=draw(positive),
                     pool=draw(st.sampled_from(["linear", "log"])),
                     pool_misfit=draw(st.floats(0, 0.5)))  # fmt: skip
        entry["statement"] = draw(st.lists(statements(), min_size=1, max_size=2))
        return entry
    entry.update(draw(statements()))
    return entry


@st.composite
def noise_tables(draw):
    kind = draw(st.sampled_from(["sd", "range", "invgamma"]))
    if kind == "sd":
        return {"sd": draw(positive)}
    if kind == "range":
        low = draw(positive)
        return {"low": low, "high": _above(low, draw(positive)), "mass": draw(masses)}
    return {"shape": draw(positive), "scale": draw(positive)}


@st.composite
def correlation_tables(draw):
    names_ = draw(st.lists(st.sampled_from(["intercept", "x1", "x2"]), unique=True, min_size=1))
    k = len(names_)
    table = {"names": names_}
    if draw(st.booleans()):
        table["mean"] = draw(st.lists(numbers, min_size=k, max_size=k))
        sd = draw(st.lists(positive, min_size=k, max_size=k))
        table["cov"] = [[sd[i] ** 2 if i == j else 0.0 for j in range(k)] for i in range(k)]
    else:
        others = [n for n in names_ if n != "intercept"]
        rows = []
        for i in range(k):
            low = draw(numbers)
            at = {n: float(i == j) * draw(positive) for j, n in enumerate(others)}
            rows.append({"at": at, "low": low, "high": _above(low, draw(positive)), "mass": 0.9})
        table["row"] = rows
    return table


@st.composite
def well_formed_documents(draw) -> dict:
    doc: dict = {}
    if draw(st.booleans()):
        doc["study"] = {"response": "y", "title": draw(texts_ok)}
    if draw(st.integers(0, 3)) == 0:
        doc["units"] = {draw(names): draw(st.sampled_from(["m", "kg/m^3", "s^-1", "%"]))}
    if draw(st.booleans()):
        doc["noise"] = draw(noise_tables())
    if draw(st.integers(0, 3)) == 0:
        doc["pool"] = {"method": draw(st.sampled_from(["linear", "log"])),
                       "family": draw(families)}  # fmt: skip
    doc["coefficient"] = draw(st.lists(coefficient_entries(), max_size=4))
    if draw(st.integers(0, 6)) == 0:
        doc["correlation"] = draw(correlation_tables())
    if draw(st.integers(0, 4)) == 0:
        doc["reference_row"] = [{"label": draw(texts_ok), "x1": draw(numbers),
                                 "x2": draw(numbers)}]  # fmt: skip
    return doc


def _leaves(node, path=()):
    """Paths to every value in a document (tables and lists too)."""
    out = [path] if path else []
    items = (
        node.items()
        if isinstance(node, dict)
        else enumerate(node)
        if isinstance(node, list)
        else ()
    )
    for k, v in items:
        out += _leaves(v, (*path, k))
    return out


@st.composite
def prior_documents(draw) -> dict:
    """A well-formed document with up to two of its values (or tables) made wrong or extreme."""
    doc = draw(well_formed_documents())
    for _ in range(draw(st.sampled_from([0, 0, 1, 1, 2]))):
        paths = _leaves(doc)
        if not paths:
            break
        path = draw(st.sampled_from(paths))
        node = doc
        for k in path[:-1]:
            node = node[k]
        node[path[-1]] = draw(corrupt_values)
    if draw(st.integers(0, 9)) == 0:  # an unknown key
        doc[draw(st.sampled_from(["zzz", "coefficients", "Noise"]))] = draw(wrong)
    return doc


@fuzz(1000)
@given(doc=prior_documents(), fmt=st.sampled_from(["json", "text"]))
def test_structured_prior_files(folder, doc, fmt):
    _run_both(folder, toml_text(doc), fmt)


# ----- mutated files: edits of a valid file -----

TOKENS = ["[[coefficient]]", "[noise]", "=", "[", "]", "{", '"', "nan", "inf", "1e999", "-0",
          "\ufeff", "\x00", "\n", "9" * 5000, "mass = 1e-17", "scale = 1e308", "per = 1e-308",
          "low = -1e308", "family = \"student_t\"", "df = 0.001", "name = \"x1\""]  # fmt: skip


@st.composite
def mutated_files(draw) -> str:
    text = VALID
    for _ in range(draw(st.integers(1, 4))):
        i = draw(st.integers(0, len(text)))
        j = min(len(text), i + draw(st.integers(0, 8)))
        insert = draw(st.sampled_from(TOKENS) | texts | st.just(""))
        text = text[:i] + insert + text[j:]
    return text


@fuzz(500)
@given(text=mutated_files())
def test_mutated_prior_files(folder, text):
    _run_both(folder, text)


# ----- regression cases: inputs that once crashed or printed nonsense -----

DEEP = 500


@pytest.mark.parametrize(
    "body",
    [
        "x = " + "[" * DEEP + "]" * DEEP,  # arrays nested 500 deep: RecursionError in tomllib
        "x = " + "{a = " * DEEP + "1" + "}" * DEEP,  # inline tables nested 500 deep
        "[" + ".".join(["t"] * DEEP) + "]\nv = 1",  # a table header 500 levels deep
        '[[coefficient]]\nname = "x1"\ncenter = ' + "9" * 5000 + "\nscale = 1.0",
        '[[coefficient]]\nname = "x1"\ncenter = 1_' + "0" * 5000 + "\nscale = 1.0",
        '[[coefficient]]\nname = "x1"\ncenter = ' + "9" * 400 + "\nscale = 1.0",
        '[[coefficient]]\nname = "x1"\nlow = -1.0\nhigh = 1.0\nmass = 1e-17',
        '[[coefficient]]\nname = "x1"\ncenter = 0.0\nscale = 1e308',  # OverflowError in penalties
        '[[coefficient]]\nname = "x1"\nlow = -1e308\nhigh = 1e308\nmass = 0.5',  # sd=inf, nan
        '[[coefficient]]\nname = "x1"\nlow = -1.0\nhigh = 1.0\nmass = 0.5\nper = 1e-308',
        '[[coefficient]]\nname = "x1"\nlow = 0.0\nhigh = 1e-320\nmass = 0.9',  # SVD no converge
        '[[coefficient]]\nname = "x1"\ncenter = 0.0\nscale = 5e-324',
        "[noise]\nsd = 1e-308",  # infs in the engine
        "[noise]\nshape = 1e-308\nscale = 1e308",
        '[[coefficient]]\nname = "x1"\nfamily = "student_t"\ndf = 1e-300\nlow = -1\nhigh = 1\n'
        "mass = 0.9",
        '[[coefficient]]\nname = "x1"\nlow = -1\nhigh = 1\nmass = 0.9\nweight = 1e-300\n'
        '[[coefficient]]\nname = "x1"\nlow = 0\nhigh = 2\nmass = 0.9\nweight = 1e300',  # brentq
        '[correlation]\nnames = ["x1", "x2"]\nmean = [0, 0]\ncov = [[1e308, 0], [0, 1e308]]',
        '[[coefficient]]\nname = "x1"\nfamily = "laplace"\nlow = -1e308\nhigh = 1.0\nmass = 0.9',
        '[[coefficient]]\nname = "x\u00e9\U0001f600"\ncenter = 0\nscale = 1',
        '[[coefficient]]\nname = "x1"\ntitle = [[[[[[1]]]]]]',
    ],
)
def test_regression_prior_files(folder, body):
    _run_both(folder, '[study]\nresponse = "y"\n\n' + body + "\n", events=False)
    _run_both(folder, '[study]\nresponse = "y"\n\n' + body + "\n", "text", events=False)
