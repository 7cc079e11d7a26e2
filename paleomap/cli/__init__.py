"""The ``paleomap`` command line: a click group of thin commands.

Each command lives in a module of its own, parses its options, calls the public API
and reports. Only this package prints; the library logs through :mod:`logging`.

A :class:`~paleomap.errors.PaleomapError` becomes one clean message on standard
error and exit status 2 (bad input, a refused output folder, and faults of the system
such as no permission or a full disk); Ctrl-C exits 130 and SIGTERM 143, each after
removing the temporary folder; any other exception is a bug and exits 1.
"""

from __future__ import annotations

import logging
import signal
import sys
import warnings

import click

from .._version import __version__
from ..errors import PaleomapError, PaleomapWarning

__all__ = ["main"]


class _Terminated(KeyboardInterrupt):
    """SIGTERM, raised where the process is so that every temporary folder is removed."""


def _on_sigterm(signum, frame) -> None:
    raise _Terminated()


class _Group(click.Group):
    def invoke(self, ctx: click.Context):
        try:
            previous = signal.signal(signal.SIGTERM, _on_sigterm)
        except ValueError:  # not the main thread (e.g. a test runner): leave it be
            previous = None
        try:
            return self._invoke(ctx)
        finally:
            if previous is not None:
                signal.signal(signal.SIGTERM, previous)

    def _invoke(self, ctx: click.Context):
        try:
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always", PaleomapWarning)
                try:
                    return super().invoke(ctx)
                finally:
                    _print_warnings(caught)
        except PaleomapError as exc:
            click.echo(f"Error: {exc}", err=True)
            ctx.exit(2)
        except (click.exceptions.Exit, click.exceptions.Abort, click.ClickException):
            raise
        except _Terminated:
            click.echo("Terminated; nothing was replaced.", err=True)
            ctx.exit(143)
        except KeyboardInterrupt:
            click.echo("Interrupted; nothing was replaced.", err=True)
            ctx.exit(130)
        except Exception as exc:  # a bug: say so, keep the traceback for the report
            import traceback

            click.echo(
                "Internal error (this is a bug in paleomap, please report it with the "
                "output of `paleomap --version`):",
                err=True,
            )
            click.echo("".join(traceback.format_exception(exc)), err=True)
            ctx.exit(1)


def _print_warnings(caught) -> None:
    seen = set()
    for w in caught:
        if issubclass(w.category, PaleomapWarning):
            text = str(w.message)
            if text not in seen:
                seen.add(text)
                click.echo(f"Warning: {text}", err=True)


class _ProgressHandler(logging.Handler):
    """Shows the library's log records on standard error."""

    def emit(self, record: logging.LogRecord) -> None:
        try:
            click.echo(self.format(record), err=True)
        except Exception:  # pragma: no cover - never fail a build over a log line
            self.handleError(record)


# Loggers whose INFO records are progress a user wants to see by default; the rest of
# the library's INFO records (each file written, fitted parameters) show with -v.
_PROGRESS_LOGGERS = (
    "paleomap.pipeline",
    "paleomap.io.writers",
    "paleomap.figures.all",
    "paleomap.report",
)


class _ProgressFilter(logging.Filter):
    def __init__(self, verbose: int) -> None:
        super().__init__()
        self.verbose = verbose

    def filter(self, record: logging.LogRecord) -> bool:
        if record.levelno >= logging.WARNING or self.verbose:
            return True
        return record.name in _PROGRESS_LOGGERS


def _setup_logging(verbose: int, quiet: bool) -> None:
    level = logging.WARNING if quiet else (logging.DEBUG if verbose > 1 else logging.INFO)
    logger = logging.getLogger("paleomap")
    logger.handlers[:] = []
    handler = _ProgressHandler()
    handler.setFormatter(logging.Formatter("%(message)s"))
    handler.addFilter(_ProgressFilter(verbose))
    logger.addHandler(handler)
    logger.setLevel(level)
    logger.propagate = False


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, "--version", prog_name="paleomap")
@click.option(
    "-v", "--verbose", count=True, help="More detail in the progress messages (-vv for debugging)."
)
@click.option("-q", "--quiet", is_flag=True, help="Only warnings and errors.")
@click.pass_context
def main(ctx: click.Context, verbose: int, quiet: bool) -> None:
    """Paleogeographic facies-belt and shoreline maps from logged cores.

    \b
    Examples:
      paleomap check basin/project.toml
      paleomap build basin/project.toml --out basin/build
      paleomap demo
    """
    ctx.ensure_object(dict)
    ctx.obj["quiet"] = quiet
    _setup_logging(verbose, quiet)


def _register() -> None:
    # Each command module adds itself here; imported lazily so `paleomap --help` stays quick.
    import importlib

    for name in ("check", "build", "demo", "synth", "schemes", "versions"):
        try:
            module = importlib.import_module(f".{name}", __name__)
        except ModuleNotFoundError as exc:
            if exc.name == f"{__name__}.{name}":
                continue  # command not built yet
            raise
        main.add_command(module.command)


_register()

if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
