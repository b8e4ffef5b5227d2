"""The `bayes` command: a thin layer over the Python API.

Only the command modules touch files and the terminal. Heavy libraries are imported inside the
commands so that ``bayes --help`` starts instantly. Commands live in :mod:`bayes.cli.fitting`
(fit, predict), :mod:`bayes.cli.studies` (sweep, compare, report, demo), :mod:`bayes.cli.contrast`
and :mod:`bayes.cli.plan`; their shared
options and helpers in :mod:`bayes.cli.options`.
"""

from __future__ import annotations

import click

from bayes.cli.contrast import contrast_command
from bayes.cli.fitting import fit_command, predict_command
from bayes.cli.plan import plan_command
from bayes.cli.studies import compare_command, demo_command, report_command, sweep_command
from elicit.guard import GuardedGroup


class _Group(GuardedGroup):
    """Bad input ends with one line on stderr and exit status 2, a bug with one line and exit
    status 1 (``bayes --debug``: the traceback), never a traceback otherwise
    (:mod:`elicit.guard`)."""

    prog = "bayes"

    def main(self, args=None, *rest, **options):
        """Run the command with its arguments recorded: the files it writes record its line."""
        import sys

        from bayes.results.provenance import record_command

        record_command(sys.argv[1:] if args is None else args)
        try:
            return super().main(args, *rest, **options)
        finally:
            record_command(None)

    def input_message(self, ctx, message: str) -> str:
        """A library error names a parameter ("level must ..."): say the option it came from."""
        import re

        command = self.commands.get(ctx.invoked_subcommand or "")
        opts = {p.name: p.opts[0] for p in (command.params if command else ()) if p.opts}
        # advice such as "use method='sample'" reads "use --method sample" here
        message = re.sub(
            r"\b(\w+)='([^']*)'",
            lambda m: f"{opts[m[1]]} {m[2]}" if m[1] in opts else m[0],
            message,
        )
        first = message.split(" ", 1)[0]
        return f"{opts[first]}: {message}" if first in opts else message


@click.group(cls=_Group)
@click.version_option(package_name="bayes-elicit")
def main() -> None:
    """Bayesian linear regression with expert priors stated in natural units."""


for _command in (fit_command, predict_command, report_command, demo_command, compare_command,
                 sweep_command, contrast_command, plan_command):  # fmt: skip
    main.add_command(_command)
