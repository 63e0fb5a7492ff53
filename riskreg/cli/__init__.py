"""The `riskreg` command line."""

from __future__ import annotations

import sys

import click
from sqlalchemy.exc import SQLAlchemyError

from riskreg.engineering.derivation import InputError


class CliError(click.ClickException):
    """A bad argument or state: one line on stderr, exit status 2."""

    exit_code = 2


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
def cli() -> None:
    """riskreg: the machine-guarding risk register."""


def _register_commands() -> None:
    from . import exchange as _exchange  # noqa: F401  (registers export, import, backup, restore)
    from . import register  # noqa: F401  (registers init, serve, demo, machines)
    from . import reports as _reports  # noqa: F401  (registers report machine/site/due/…)
    from .calc import calc

    if "calc" not in cli.commands:
        cli.add_command(calc)


def main(argv: list[str] | None = None) -> None:
    """Entry point: every error is one line and exit status 2, never a traceback."""
    _register_commands()
    try:
        rv = cli.main(args=argv, prog_name="riskreg", standalone_mode=False)
    except click.exceptions.Abort:
        click.echo("riskreg: aborted", err=True)
        sys.exit(1)
    except click.UsageError as exc:
        hint = ""
        if exc.ctx is not None:
            hint = f" (see '{exc.ctx.command_path} --help')"
        message = " ".join(exc.format_message().split())
        click.echo(f"riskreg: error: {message}{hint}", err=True)
        sys.exit(2)
    except click.ClickException as exc:
        message = " ".join(exc.format_message().split())
        click.echo(f"riskreg: error: {message}", err=True)
        sys.exit(exc.exit_code)
    except InputError as exc:
        click.echo(f"riskreg: error: {exc}", err=True)
        sys.exit(2)
    except SQLAlchemyError as exc:
        detail = " ".join(str(getattr(exc, "orig", None) or exc).split())[:300]
        click.echo(f"riskreg: error: the database refused the operation: {detail}", err=True)
        sys.exit(1)
    sys.exit(rv if isinstance(rv, int) else 0)
