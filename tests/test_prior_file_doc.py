"""docs/prior-file.md documents every key the prior-file reader allows."""

import importlib
import pkgutil
import re
from pathlib import Path

from click.testing import CliRunner

import elicit
from elicit.cli import main

DOC = Path(__file__).resolve().parents[1] / "docs" / "prior-file.md"
# The [model] table's keys (formula, reference, intercept) and the reference row's label are
# documented whether or not the reader holds them in a key set.
ALSO = {"formula", "reference", "intercept", "label"}


def key_sets() -> dict[str, frozenset]:
    """Every ``*_KEYS`` frozenset of the elicit modules, by ``module.NAME``."""
    found = {}
    for info in pkgutil.iter_modules(elicit.__path__):
        if info.name == "cli":
            continue
        module = importlib.import_module(f"elicit.{info.name}")
        for name, value in vars(module).items():
            if name.strip("_").endswith("KEYS") and isinstance(value, frozenset):
                found[f"{info.name}.{name}"] = value
    return found


def test_the_key_sets_are_found():
    sets = key_sets()
    assert {"statements.STATEMENT_KEYS", "validate._NOISE_KEYS", "pool_table.POOL_KEYS",
            "noise_record.NOISE_RECORD_KEYS", "validate_mixture.COMPONENT_KEYS"} <= set(
        sets)  # fmt: skip


def test_every_key_is_documented():
    text = DOC.read_text(encoding="utf-8")
    # a key in backticks, or a table named in its heading ([study], [[coefficient]])
    documented = set(re.findall(r"`([A-Za-z_]+)", text))
    documented |= set(re.findall(r"^## \[\[?([A-Za-z_]+)", text, re.M))
    keys = set().union(*key_sets().values()) | ALSO
    missing = sorted(keys - documented)
    assert not missing, f"keys not documented in {DOC.name}: {missing}"


def test_every_table_has_a_section():
    text = DOC.read_text(encoding="utf-8")
    top = key_sets()["validate._TOP_KEYS"] | {"model"}
    for table in top:
        assert re.search(rf"^## \[\[?{table}\]\]?$", text, re.M), table


def test_show_help_points_to_the_document():
    result = CliRunner().invoke(main, ["show", "--help"])
    assert "docs/prior-file.md" in result.stdout
