"""The ``elicit`` command: show, pool, interview. A thin layer over the elicit modules.

Bad input ends with one line on stderr and exit status 2, a bug with one line and exit status 1
(``elicit --debug``: the traceback), never a traceback otherwise (:mod:`elicit.guard`).
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import click

from elicit.guard import GuardedGroup, one_line


class BadInput(click.ClickException):
    """Bad input from the user: one line, exit status 2."""

    exit_code = 2


class _Group(GuardedGroup):
    """A click group whose errors are single lines on stderr (:mod:`elicit.guard`)."""

    prog = "elicit"
    prefix = "elicit: "

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        try:
            code = super().main(args, prog_name, complete_var, standalone_mode=False, **extra)
        except click.ClickException as exc:
            click.echo(f"elicit: {one_line(exc.format_message())}", err=True)
            sys.exit(exc.exit_code)
        except click.Abort:
            click.echo("elicit: interrupted; nothing was written", err=True)
            sys.exit(2)
        sys.exit(code if isinstance(code, int) else 0)


def _read_data(path: str | None):
    if path is None:
        return None
    from elicit.io import read_table

    return read_table(path)


def _out_path(out: str) -> Path:
    path = Path(out)
    if not path.parent.is_dir():
        raise BadInput(f"{out}: folder {str(path.parent)!r} does not exist")
    return path


def _data_columns(frame) -> list[str]:
    """Design columns the data can supply: numeric columns and ``name[level]`` of the others."""
    columns = list(frame.columns)
    for name in frame.columns:
        if frame[name].dtype == object or str(frame[name].dtype) == "category":
            columns += [f"{name}[{v}]" for v in frame[name].dropna().unique()]
    return columns


@click.group(cls=_Group)
def main() -> None:
    """Elicit priors from experts: show what a prior file implies, pool experts, interview."""


@main.command()
@click.argument("priors", type=click.Path(dir_okay=False))
@click.option("--noise-sd", type=float, help="Residual sd for the penalties (default: prior).")
@click.option("--data", type=click.Path(dir_okay=False), help="CSV: reference rows and checks.")
@click.option("--response", help="Response column of --data (default: [study] response).")
@click.option("--formula", help="Model formula, as for bayes fit (default: the file's [model]).")
@click.option("--reference", multiple=True, metavar="COLUMN=LEVEL",
              help="Reference level of a categorical predictor (repeatable; default: the "
              "file's [model], else the most frequent level).")  # fmt: skip
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text")
def show(priors: str, noise_sd: float | None, data: str | None, response: str | None,
         formula: str | None, reference: tuple[str, ...], fmt: str):  # fmt: skip
    """Show each prior's parameters and what it implies.

    With --data, the model's terms are built as bayes fit builds them (formula and reference
    levels from the options or the file's [model]), categorical levels included.
    The prior file's tables and keys, with examples: docs/prior-file.md.
    """
    from elicit.feedback import feedback
    from elicit.read import read_prior_file
    from elicit.show import format_text, to_json

    if noise_sd is not None and not noise_sd > 0:
        raise BadInput(f"--noise-sd: must be positive, got {noise_sd:g}")
    prior_set = read_prior_file(priors)
    frame = _read_data(data)
    if frame is None and (formula or reference):
        raise BadInput("--formula and --reference go with --data")
    if frame is not None:
        response = response or prior_set.response
        if response is not None and response not in frame:
            raise BadInput(f"{data}: no response column {response!r}")
        frame = _model_frame(prior_set, frame, Path(data).name, response, formula, reference)
    fb = feedback(prior_set, noise_sd=noise_sd, frame=frame, response=response)
    if fmt == "json":
        click.echo(json.dumps(to_json(fb), allow_nan=False))
    else:
        click.echo(format_text(fb), nl=False)


def _model_frame(prior_set, frame, source, response, formula, reference):
    """The data as the model's design columns (levels as indicator columns), built as bayes fit
    builds them; the priors are checked against those columns. Without a formula, reference
    levels or text columns, the data as they are."""
    from bayes.data.coding import reference_levels
    from bayes.data.model_choice import choose_model, file_errors

    choice = choose_model(prior_set, formula=formula, reference=reference_levels(reference),
                          response=response)  # fmt: skip
    for line in choice.notes():
        click.echo(f"note: {line}", err=True)
    text = any(frame[c].dtype == object or str(frame[c].dtype) == "category" for c in frame)
    if choice.formula is None and not choice.reference and not text:
        prior_set.check_columns(_data_columns(frame))
        return frame
    from bayes.data.design import build_design

    with file_errors(choice):
        design = build_design(frame, response, source=source, formula=choice.formula,
                              reference=choice.reference, intercept=choice.intercept)  # fmt: skip
    if design.terms is not None:
        design.terms.check_priors(prior_set)
    prior_set.check_columns(design.names)
    return design.frame()


def _pairs(option: str, values: tuple[str, ...]) -> dict[str, str]:
    """``NAME=VALUE`` options as a mapping (split at the last ``=``)."""
    out = {}
    for text in values:
        name, eq, value = text.rpartition("=")
        if not eq or not name.strip() or not value.strip():
            raise BadInput(f"{option}: expected NAME=VALUE, got {text!r}")
        out[name.strip()] = value.strip()
    return out


def _pool_families(values: tuple[str, ...]) -> str | dict[str, str] | None:
    from elicit.spec import POOL_FAMILIES

    every = [v for v in values if "=" not in v]
    chosen = _pairs("--family", tuple(v for v in values if "=" in v))
    for fam in [*every, *chosen.values()]:
        if fam not in POOL_FAMILIES:
            raise BadInput(
                f"--family: unknown family {fam!r} (expected {', '.join(POOL_FAMILIES)})"
            )
    if every and chosen:
        raise BadInput("--family: give one family for all, or COLUMN=FAMILY options, not both")
    return every[-1] if every else (chosen or None)


def _pool_weights(values: tuple[str, ...]) -> dict[str, float]:
    weights = {}
    for name, text in _pairs("--weight", values).items():
        try:
            weights[name] = float(text)
        except ValueError:
            raise BadInput(f"--weight: {name}: not a number: {text!r}") from None
        if not (0 < weights[name] < float("inf")):
            raise BadInput(f"--weight: {name}: must be positive and finite, got {text}")
    return weights


@main.command()
@click.argument("priors", nargs=-1, required=True, type=click.Path(dir_okay=False))
@click.option("--out", required=True, type=click.Path(dir_okay=False), help="Pooled prior file.")
@click.option("--method", type=click.Choice(["linear", "log"]), help="Overrides [pool] method.")
@click.option("--family", "families", multiple=True, metavar="[COLUMN=]FAMILY",
              help="Family of pooled priors: normal, laplace, student_t, flat or mixture (keeps "
                   "the experts' distributions as a mixture); COLUMN=FAMILY for one coefficient "
                   "(repeatable). Overrides [pool] family.")  # fmt: skip
@click.option("--weight", "weights", multiple=True, metavar="EXPERT=W",
              help="Weight of one expert's statements (repeatable; default 1 each).")  # fmt: skip
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text")
def pool(priors: tuple[str, ...], out: str, method: str | None, families: tuple[str, ...],
         weights: tuple[str, ...], fmt: str):  # fmt: skip
    """Pool the experts' prior files (one or more) per coefficient; keep their statements.

    The files must describe the same study (response, units, model). See docs/prior-file.md.
    """
    from elicit.io import atomic_write_text
    from elicit.pool_files import pool_files
    from elicit.read import load_document
    from elicit.validate import parse_priors
    from elicit.write import dump_toml, prior_doc

    family = _pool_families(families)
    weight = _pool_weights(weights)
    path = _out_path(out)
    docs = [(p, load_document(p)) for p in priors]
    prior_set, record = pool_files(docs, method=method, family=family, weights=weight)
    doc = {**prior_doc(prior_set), "pool": record}
    parse_priors(doc, source=out)  # what is written reads back
    names = ", ".join(Path(p).name for p in priors)
    atomic_write_text(path, dump_toml(doc, header=f"Pooled by `elicit pool` from {names}."))
    rows = [
        {
            "name": c.column,
            "family": c.family,
            "center": c.center if c.family != "flat" else None,
            "scale": c.scale if c.family != "flat" else None,
            "pool": c.pool,
            "pool_misfit": c.pool_misfit,
            "statements": len(c.statements),
            "components": [vars(p) for p in c.components] or None,
        }
        for c in prior_set.coefficients
    ]
    if fmt == "json":
        click.echo(json.dumps({"out": out, "coefficients": rows}, allow_nan=False))
        return
    for r in rows:
        if r["components"]:
            click.echo(
                f"{r['name']}: {r['statements']} statements kept as a mixture of "
                f"{len(r['components'])} components (mean {r['center']:.4g}, sd {r['scale']:.4g})"
            )
        elif r["pool"]:
            click.echo(
                f"{r['name']}: {r['statements']} statements, {r['pool']} pool -> {r['family']}"
                f"(center={r['center']:.4g}, scale={r['scale']:.4g}), largest cdf difference "
                f"of the fit {r['pool_misfit']:.3g}"
            )
        else:
            click.echo(f"{r['name']}: one statement, kept as is")
    click.echo(f"wrote {out}")


@main.command()
@click.option("--data", required=True, type=click.Path(dir_okay=False), help="CSV of the study.")
@click.option("--response", help="Response column (default: the resumed file's).")
@click.option("--out", required=True, type=click.Path(dir_okay=False), help="Prior file to write.")
@click.option("--response-units", help="Units of the response, e.g. MPa.")
@click.option("--expert", help="Default expert name.")
@click.option("--no-noise", is_flag=True, help="Do not ask about the noise.")
@click.option("--conditional", is_flag=True,
              help="Ask the expected response at reference rows instead "
              "(conditional means).")  # fmt: skip
@click.option("--formula",
              help="Model formula (as for bayes fit): ask about each categorical level and "
              "derived term.")  # fmt: skip
@click.option("--reference", multiple=True, metavar="COLUMN=LEVEL",
              help="Reference level of a categorical predictor (repeatable).")  # fmt: skip
@click.option("--browser", is_flag=True, help="Interview in the browser (a local server).")
@click.option("--others", multiple=True, type=click.Path(dir_okay=False),
              help="--browser: another expert's prior file, shown after answering "
              "(repeatable).")  # fmt: skip
@click.option("--no-open", is_flag=True, help="--browser: print the address, do not open it.")
@click.option("--host", default="127.0.0.1", show_default=True,
              help="--browser: address to serve on (another than 127.0.0.1 warns).")  # fmt: skip
@click.option("--port", type=click.IntRange(0, 65535), default=0,
              help="--browser: port (default: a free one).")  # fmt: skip
def interview(data: str, response: str | None, out: str, response_units: str | None,
              expert: str | None, no_noise: bool, conditional: bool, formula: str | None = None,
              reference: tuple[str, ...] = (), browser: bool = False, others: tuple[str, ...] = (),
              no_open: bool = False, host: str = "127.0.0.1", port: int = 0):  # fmt: skip
    """Ask an expert about each predictor, with feedback; save after every answer; resume."""
    from elicit.interview import Interview, terms_from_data

    frame = _read_data(data)
    if response is None:  # the browser takes it from the file being resumed
        response = _resumed_response(out)
    if response not in frame:
        raise BadInput(f"{data}: no response column {response!r}")
    _out_path(out)
    if not browser and (others or no_open or host != "127.0.0.1" or port):
        raise BadInput("--others, --no-open, --host and --port go with --browser")
    from elicit.columns_kind import column_kinds

    design = _design(frame, response, data, formula, reference)
    # the row label and the columns not used (those the formula does not name, with one)
    notes = column_kinds(frame, response).notes() if design is None else design.notes
    if design is not None:
        frame = design.frame()
    if browser:
        _browser(frame, response, Path(out), response_units, expert, no_noise, others, design,
                 (formula, _levels(design)), notes, no_open=no_open, host=host,
                 port=port, conditional=conditional)  # fmt: skip
        return

    echo = not sys.stdin.isatty()

    def ask(prompt, type=None, default=None):
        answer = click.prompt(prompt, type=type, default=default)
        if echo:  # scripted input is not echoed by the terminal: show it for the transcript
            click.echo(answer)
        return answer

    for line in notes:
        click.echo(line)
    session = Interview(Path(out), response, ask, click.echo, frame=frame,
                        response_units=response_units, expert=expert)  # fmt: skip
    if design is not None:
        from bayes.data.questions import interview_terms

        session.model = (formula, _levels(design))
        terms = interview_terms(design, units=session.priors.units)
    else:
        terms = terms_from_data(frame, response, units=session.priors.units)
    try:
        session.run(terms, noise=not no_noise, conditional=conditional)
    except click.Abort:
        click.echo(f"\nelicit: interview stopped; {_kept(Path(out))}", err=True)
        sys.exit(2)  # an interrupted interview is bad input: status 2, nothing lost


def _design(frame, response: str, data: str, formula, reference):
    """The design of ``--formula`` / ``--reference`` (levels and derived terms,
    bayes.data.questions), or None without them; both faces ask about its terms."""
    if not (formula or reference):
        return None
    from bayes.data.coding import reference_levels
    from bayes.data.design import build_design
    from bayes.errors import InputError
    from elicit.model_spec import formula_lhs

    if formula and formula_lhs(formula) not in (None, response):
        raise BadInput(f"--formula: its response differs from --response {response!r}")
    try:
        return build_design(frame, response, source=Path(data).name, formula=formula,
                            reference=reference_levels(reference))  # fmt: skip
    except InputError as exc:
        raise BadInput(str(exc)) from None


def _levels(design) -> dict[str, str]:
    """The reference level used for each categorical predictor of ``design`` (written as
    ``[model] reference``)."""
    if design is None or not design.terms:
        return {}
    return {c.name: c.reference for c in design.terms.categorical}


def _resumed_response(out: str) -> str:
    from elicit.read import read_prior_file

    if Path(out).exists() and (found := read_prior_file(out).response):
        return found
    raise BadInput("--response: missing (and no prior file to resume names one)")


def _browser(frame, response, out: Path, response_units, expert, no_noise, others, design,
             model, notes, *, no_open: bool, host: str, port: int,
             conditional: bool = False) -> None:  # fmt: skip
    import webbrowser

    from elicit.browser.api import Study
    from elicit.browser.launch import check_host, serve
    from elicit.interview import terms_from_data
    from elicit.read import read_prior_file

    if warning := check_host(host):
        click.echo(f"elicit: {warning}", err=True)
    units = read_prior_file(out).units if out.exists() else {}
    if design is not None:
        from bayes.data.questions import interview_terms

        terms = tuple(interview_terms(design, units=units))
    else:
        terms = tuple(terms_from_data(frame, response, units=units))
    study = Study(out, frame, response, terms, response_units,
                  tuple((p, read_prior_file(p)) for p in others), noise=not no_noise,
                  model=model if design is not None else None, notes=notes,
                  conditional=conditional)  # fmt: skip
    serve(study, expert=expert, host=host, port=port, say=click.echo,
          ready=None if no_open else webbrowser.open)  # fmt: skip


def _kept(out: Path) -> str:
    """What an interrupted interview keeps, as it is on disk."""
    from elicit.outfile import sidecar

    draft = sidecar(out, ".draft")
    if out.exists():
        kept = f"accepted answers are in {out}"
        if draft.exists():
            kept += f"; the answers typed for the current question are kept in {draft}"
    elif draft.exists():
        kept = (
            f"nothing accepted yet; the answers typed for the current question are kept in {draft}"
        )
    else:
        return "nothing accepted yet; nothing written"
    return kept + "; run the same command to resume"


if __name__ == "__main__":
    main()
