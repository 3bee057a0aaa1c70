"""The ``parasite`` command line: a thin layer of click commands over the library.

Each subcommand lives in its own module of this package and is loaded only
when it is run, so that ``parasite --help`` stays fast. Exit codes follow the
command-line contract: 0 done, 1 input in error, 2 command line wrong,
3 ``check`` found a loop over its limit.
"""

from __future__ import annotations

import importlib
import importlib.util
import sys
from collections.abc import Callable
from typing import Any, TypeVar

import click

from parasite import __version__
from parasite.errors import ParasiteError

# name -> (module, attribute); a subcommand whose module is absent is not offered.
_COMMANDS: dict[str, tuple[str, str]] = {
    "augment": ("parasite.cli.augment_cmd", "augment"),
    "report": ("parasite.cli.report_cmd", "report"),
    "check": ("parasite.cli.check_cmd", "check"),
    "plot": ("parasite.cli.plot_cmd", "plot"),
    "ring": ("parasite.cli.ring_cmd", "ring"),
    "import": ("parasite.cli.import_cmd", "import_board"),
    "batch": ("parasite.cli.batch_cmd", "batch"),
}

EXIT_INPUT_ERROR = 1
EXIT_USAGE = 2
EXIT_OVER_LIMIT = 3


class _LazyGroup(click.Group):
    def list_commands(self, ctx: click.Context) -> list[str]:
        return sorted(n for n, (mod, _) in _COMMANDS.items() if importlib.util.find_spec(mod))

    def get_command(self, ctx: click.Context, cmd_name: str) -> click.Command | None:
        if cmd_name not in _COMMANDS:
            return None
        mod, attr = _COMMANDS[cmd_name]
        if importlib.util.find_spec(mod) is None:
            return None
        command = getattr(importlib.import_module(mod), attr)
        assert isinstance(command, click.Command)
        return command


F = TypeVar("F", bound=Callable[..., Any])


def reports_input_errors(func: F) -> F:
    """Decorate a command body: a :class:`ParasiteError` becomes its message on
    standard error and exit code 1."""
    import functools

    @functools.wraps(func)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        try:
            return func(*args, **kwargs)
        except ParasiteError as exc:
            click.echo(str(exc), err=True)
            sys.exit(EXIT_INPUT_ERROR)

    return wrapper  # type: ignore[return-value]


@click.group(cls=_LazyGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="parasite")
def main() -> None:
    """Wire the inductance and resistance of routed copper into a SPICE netlist.

    The numbers are estimates from closed-form formulas: confirm them by
    measurement before relying on them.
    """
