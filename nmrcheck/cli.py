"""Command line: thin wrappers that parse options, call the library and print; user errors become one line."""

from __future__ import annotations

import functools
import logging
import sys

import click

from nmrcheck import __version__
from nmrcheck.errors import NmrcheckError

CONTEXT = {"help_option_names": ["-h", "--help"], "max_content_width": 100}


def _quiet_libraries() -> None:
    try:
        from rdkit import RDLogger

        RDLogger.DisableLog("rdApp.*")
    except ImportError:  # pragma: no cover - RDKit is a dependency
        pass


def user_errors(func):
    """Turn an :class:`NmrcheckError` into ``nmrcheck: <message>`` on stderr and exit status 2."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        try:
            return func(*args, **kwargs)
        except NmrcheckError as exc:
            click.echo(f"nmrcheck: {exc}", err=True)
            sys.exit(2)

    return wrapper


@click.group(context_settings=CONTEXT)
@click.version_option(__version__, prog_name="nmrcheck")
@click.option("-v", "--verbose", count=True, help="More log output (repeat for debug).")
def main(verbose: int) -> None:
    """Triage 1H micro-NMR spectra and HRMS features of natural-product isolates.

    Results are screening aids, not identifications; decisions rest with the
    responsible chemist.
    """
    level = logging.WARNING - 10 * min(verbose, 2)
    logging.basicConfig(level=level, format="%(levelname)s %(message)s", stream=sys.stderr)
    _quiet_libraries()


# --- commands are registered below, one block per subcommand --------------------------
