"""Helpers of the fuzz tests: a small TOML writer, extreme values, and the check that a command
ended as the command-line contract says (exit status 0 or 2, no traceback, stderr lines that
are one-line warnings and at most one error)."""

from __future__ import annotations

import math
import os
import re
import signal

from click.testing import CliRunner
from hypothesis import HealthCheck, settings
from hypothesis import strategies as st

# Reproducible in CI: derandomized, no example database. The deadline of an example is
# RUN_LIMIT seconds per command, enforced by a timer that interrupts the run (hypothesis' own
# deadline re-runs a slow example and calls it flaky when the shared machine was just busy).
# For a longer local hunt: FUZZ_EXAMPLES=2000 FUZZ_RANDOM=1 (examples per test, fresh ones).
EXAMPLES = int(os.environ.get("FUZZ_EXAMPLES", "0"))  # 0: each test's own count
RUN_LIMIT = 120.0  # seconds for one command on the tiny invented data sets: a hang guard (a busy
# shared machine has stretched honest runs past 60 s)
FUZZ = settings(
    derandomize=not os.environ.get("FUZZ_RANDOM"),
    database=None,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
    print_blob=False,
)


def fuzz(examples: int) -> settings:
    """:data:`FUZZ` with ``examples`` examples (or FUZZ_EXAMPLES)."""
    return settings(FUZZ, max_examples=EXAMPLES or examples)


FAST_SAMPLER = ["--chains", "2", "--draws", "60", "--warmup", "30", "--seed", "3"]

# Numbers near and beyond the edges of the float range and of elicit.limits.
EXTREME_FLOATS = [
    0.0, -0.0, 1e308, -1e308, 1.7976931348623157e308, 1e307, 1e300, 1e200, 1e154, 1e101,
    1e100, -1e100, 9.99e99, 1e-100, 1.01e-100, 1e-101, 1e-154, 1e-200, 1e-300, 1e-308,
    2.2250738585072014e-308, 5e-324, -5e-324, 1e-17, 1 - 1e-16, 1 + 1e-15, math.inf,
    -math.inf, math.nan,
]  # fmt: skip
extreme_floats = st.sampled_from(EXTREME_FLOATS)
floats = st.one_of(
    st.floats(-10, 10, allow_nan=False),
    extreme_floats,
    st.floats(allow_nan=True, allow_infinity=True),
)


class Verbatim(str):
    """A number written into the TOML text as it is (Python cannot hold 5,000 digits as str)."""


huge_ints = st.sampled_from(
    [10**400, -(10**400), 2**63, -(2**63) - 1, Verbatim("9" * 5000), Verbatim("-1" + "0" * 4400)]
)
ints = st.one_of(st.integers(-5, 5), st.integers(), huge_ints)
texts = st.text(st.characters(blacklist_categories=("Cs",)), max_size=12) | st.sampled_from(
    ["nan", "inf", "-inf", "NaN", "1e309", "", " ", "normal", "x1", "\u00e9\U0001f600"]
)
scalars = st.one_of(floats, ints, texts, st.booleans())
wrong = st.one_of(
    scalars, st.lists(scalars, max_size=3), st.dictionaries(texts, scalars, max_size=2)
)


# ----- TOML writer: enough of TOML 1.0 for the generated documents -----

_BARE = re.compile(r"[A-Za-z0-9_-]+")


def _string(s: str) -> str:
    out = []
    for ch in s:
        if ch in '"\\' or ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04X}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def _key(k: str) -> str:
    return k if _BARE.fullmatch(k) else _string(k)


def _value(v) -> str:
    if isinstance(v, Verbatim):
        return str.__str__(v)
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)  # may have thousands of digits: tomllib's limit is part of the test
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return _string(v)
    if isinstance(v, list):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{_key(k)} = {_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(type(v))


def _is_table_array(v) -> bool:
    return isinstance(v, list) and bool(v) and all(isinstance(x, dict) for x in v)


def toml_text(doc: dict, path: tuple[str, ...] = ()) -> str:
    """``doc`` written as TOML: plain keys, then sub-tables, then arrays of tables."""
    lines = []
    for k, v in doc.items():
        if not isinstance(v, dict) and not _is_table_array(v):
            lines.append(f"{_key(k)} = {_value(v)}")
    for k, v in doc.items():
        if isinstance(v, dict):
            name = ".".join(_key(p) for p in (*path, k))
            lines += ["", f"[{name}]", toml_text(v, (*path, k))]
    for k, v in doc.items():
        if _is_table_array(v):
            name = ".".join(_key(p) for p in (*path, k))
            for item in v:
                lines += ["", f"[[{name}]]", toml_text(item, (*path, k))]
    return "\n".join(line for line in lines if line is not None) + "\n"


# ----- the check -----


class OverTime(BaseException):
    """A command ran past RUN_LIMIT (a BaseException: the command's guard does not catch it)."""


def _over_time(signum, frame):
    raise OverTime(f"over the time limit of {RUN_LIMIT:g} s")


def run_cli(main, args, *, prefix: str):
    """Run a command in process and check how it ended; returns the click result.

    Fails on an exception other than SystemExit (a traceback), an exit status other than 0
    or 2, a stderr line that is neither ``warning: ...`` nor the one error line, an error
    line on a successful run, or a run longer than :data:`RUN_LIMIT`.
    """
    previous = signal.signal(signal.SIGALRM, _over_time)
    signal.setitimer(signal.ITIMER_REAL, RUN_LIMIT)
    try:
        result = CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=True)
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
    shown = f"{' '.join(map(str, args))}\nstdout: {result.stdout[-2000:]}\nstderr: {result.stderr}"
    if result.exception is not None and not isinstance(result.exception, SystemExit):
        raise result.exception
    assert result.exit_code in (0, 2), shown
    assert "Traceback" not in result.output, shown
    lines = result.stderr.splitlines()
    errors = [line for line in lines if not line.startswith("warning: ")]
    if result.exit_code == 2:
        assert len(errors) == 1 and errors[0].startswith(prefix), shown
        assert lines[-1] == errors[0], shown
    else:
        assert not errors, shown
    return result
