"""Command line: ``profiler COMMAND``.

One module per command; shared options live in :mod:`profiler.cli.options`.
Heavy modules are imported inside the commands so that start-up stays fast.
"""

from __future__ import annotations

import gc
import os
import sys

import click

from ..about import __version__
from ..errors import ProfilerError
from ..textsafe import terminal_text


class ProfilerGroup(click.Group):
    """A click group that turns every user-facing error into one line and a non-zero exit."""

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        if not standalone_mode:
            return super().main(args, prog_name, complete_var, standalone_mode=False, **extra)
        try:
            rv = super().main(args, prog_name or "profiler", complete_var, standalone_mode=False, **extra)
        except click.ClickException as exc:
            # Usage errors: one line instead of click's three-line usage block.
            hint = ""
            if isinstance(exc, click.UsageError) and exc.ctx is not None:
                hint = f" (see '{exc.ctx.command_path} --help')"
            click.echo(f"profiler: error: {terminal_text(' '.join(exc.format_message().split()))}{hint}", err=True)
            sys.exit(exc.exit_code)
        except click.Abort:
            click.echo("profiler: aborted", err=True)
            sys.exit(1)
        sys.exit(rv if isinstance(rv, int) else 0)

    def list_commands(self, ctx):
        return list(COMMANDS)

    def get_command(self, ctx, cmd_name):
        import importlib

        target = COMMANDS.get(cmd_name)
        if target is None:
            return None
        module, _, name = target.partition(":")
        return getattr(importlib.import_module(module), name)

    def invoke(self, ctx):
        try:
            return super().invoke(ctx)
        except ProfilerError as exc:
            click.echo(f"profiler: error: {exc}", err=True)
            ctx.exit(exc.exit_code)
        except (click.exceptions.Exit, click.exceptions.Abort, click.ClickException):
            raise
        except KeyboardInterrupt:
            click.echo("profiler: interrupted", err=True)
            ctx.exit(130)
        except MemoryError:
            click.echo("profiler: error: out of memory; use a coarser --step-m or a smaller area", err=True)
            ctx.exit(1)
        except Exception as exc:  # last resort: never a traceback for the user
            if os.environ.get("PROFILER_DEBUG"):
                raise
            message = terminal_text(" ".join(str(exc).split())) or type(exc).__name__
            click.echo(f"profiler: error: {message} (set PROFILER_DEBUG=1 for details and please report it)",
                       err=True)
            ctx.exit(1)


@click.group(cls=ProfilerGroup, context_settings={"help_option_names": ["-h", "--help"], "max_content_width": 100})
@click.version_option(__version__, prog_name="profiler")
def main():
    """Terrain-aware point-to-point radio path profiler.

    Line of sight, Fresnel clearance, ITU-R P.526 diffraction, LoRa link
    budget and mast height over real elevation data, offline.

    Planning aid only: local codes, permits, RF-exposure rules and licensed
    professionals prevail.
    """


#: The commands, imported only when one is asked for (``profiler link`` does not import the network code).
COMMANDS = {
    "link": "profiler.cli.link:link_command",
    "mast": "profiler.cli.mast:mast_command",
    "bands": "profiler.cli.bands:bands_command",
    "network": "profiler.cli.network:network_command",
    "siting": "profiler.cli.siting:siting_command",
    "coverage": "profiler.cli.coverage:coverage_command",
    "survey": "profiler.cli.survey:survey_command",
}


def run():
    """The ``profiler`` console command: :func:`main` in a process of its own.

    A one-link run allocates many objects while it imports the numerical
    libraries and few that form cycles, so the cyclic garbage collector is
    off until a command that runs long turns it on again (``network``,
    ``siting`` and ``coverage`` do, see :func:`collect_garbage`); at the end every object is moved
    into the permanent generation so that the interpreter's last collection
    does not walk them all.  Together about 35 ms of a 0.28 s ``profiler link``.
    """
    gc.disable()
    try:
        main()
    finally:
        gc.freeze()


def collect_garbage():
    """Turn the cyclic garbage collector back on (commands that run long or start Dask)."""
    gc.enable()


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
