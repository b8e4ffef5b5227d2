"""The last line of defence of both commands (``elicit`` and ``bayes``): one home for how an
error or a warning reaches the terminal.

- Bad input (:class:`elicit.errors.InputError`, or an :class:`OSError` naming a file): one
  line on stderr, exit status 2.
- Anything else is a bug in the tool: one line that says so and names the exception, exit
  status 1. With the group option ``--debug`` (``bayes --debug fit ...``) the traceback is
  shown instead.
- Each warning is one ``warning: ...`` line on stderr (no source line, no file path, no
  category); warnings meant for developers (deprecations) are not shown. With ``--debug``
  every warning is shown as Python shows it.

Both command groups derive from :class:`GuardedGroup`.
"""

from __future__ import annotations

import sys
import warnings
from typing import Any, NoReturn

import click

from elicit.errors import InputError

BUG_EXIT = 1  # exit status of a bug
INPUT_EXIT = 2  # exit status of bad input
MAX_MESSAGE = 400  # characters of an exception's message kept in the bug line
_HIDDEN = (DeprecationWarning, PendingDeprecationWarning, FutureWarning, ImportWarning,
           ResourceWarning)  # fmt: skip


def one_line(text: Any) -> str:
    """``text`` with its whitespace (newlines too) folded into single spaces."""
    return " ".join(str(text).split())


def bug_line(prog: str, exc: BaseException, subcommand: str | None = None) -> str:
    """What is said of an unexpected exception: a bug in ``prog``, the exception's type and
    message, and how to see the traceback (after the command's own prefix)."""
    message = one_line(exc)
    if len(message) > MAX_MESSAGE:
        message = message[: MAX_MESSAGE - 3] + "..."
    name = type(exc).__name__ + (f": {message}" if message else "")
    again = " ".join(w for w in (prog, "--debug", subcommand, "...") if w)
    return f"this is a bug in {prog}: {name} (run '{again}' to see the traceback; please report it)"


def _show_warning(message, category, filename, lineno, file=None, line=None) -> None:
    click.echo(f"warning: {one_line(message)}", err=True)


def _show_warning_in_full(message, category, filename, lineno, file=None, line=None) -> None:
    text = warnings.formatwarning(message, category, filename, lineno, line)
    click.echo(text, err=True, nl=False)


def _set_debug(ctx: click.Context, _param: click.Parameter, value: bool) -> None:
    ctx.meta["guard.debug"] = bool(value)


class GuardedGroup(click.Group):
    """A click group whose errors and warnings reach stderr as single lines.

    Subclasses set ``prog`` (the command's name) and ``prefix`` (what starts an input-error
    line), and may reword an input error's message in :meth:`input_message`.
    """

    prog = "command"  # the command's name, as typed
    prefix = "error: "

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.params.append(
            click.Option(
                ["--debug"],
                is_flag=True,
                expose_value=False,
                is_eager=True,
                callback=_set_debug,
                help="Show the traceback of an unexpected error (a bug) and warnings in full.",
            )
        )

    def input_message(self, ctx: click.Context, message: str) -> str:
        """The line shown for an input error (hook for the subclasses)."""
        return message

    def invoke(self, ctx: click.Context):
        debug = ctx.meta.get("guard.debug", False)
        with warnings.catch_warnings():
            warnings.simplefilter("default")
            if debug:
                warnings.showwarning = _show_warning_in_full
            else:
                for category in _HIDDEN:
                    warnings.simplefilter("ignore", category)
                warnings.showwarning = _show_warning
            try:
                return super().invoke(ctx)
            except InputError as exc:
                self._fail(self.input_message(ctx, one_line(exc)))
            except OSError as exc:  # an unwritable output, a full disk: name the path
                if isinstance(exc, BrokenPipeError):  # click ends a closed pipe quietly
                    raise
                if exc.filename is None:
                    if debug:
                        raise
                    self._bug(ctx, exc)
                self._fail(f"{exc.filename}: {exc.strerror or type(exc).__name__}")
            except (click.exceptions.ClickException, click.exceptions.Exit, click.Abort):
                raise
            except Exception as exc:
                if debug:
                    raise
                self._bug(ctx, exc)

    def _fail(self, message: str) -> NoReturn:
        click.echo(f"{self.prefix}{message}", err=True)
        sys.exit(INPUT_EXIT)

    def _bug(self, ctx: click.Context, exc: Exception) -> NoReturn:
        click.echo(self.prefix + bug_line(self.prog, exc, ctx.invoked_subcommand), err=True)
        sys.exit(BUG_EXIT)
