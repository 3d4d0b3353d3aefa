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


# --- process ------------------------------------------------------------------------------


def _phase_option(value: str | None) -> tuple[float, float] | None:
    if value is None:
        return None
    from nmrcheck.errors import ParameterError

    try:
        p0, p1 = (float(x) for x in value.split(","))
    except ValueError:
        raise ParameterError(f"--phase: expected 'P0,P1' in degrees, got {value!r}") from None
    return p0, p1


@main.command("process")
@click.argument("path", type=click.Path(path_type=str))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of the text summary.")
@click.option("--size", type=int, default=None, help="Points after zero-filling (power of two).")
@click.option("--lb", "lb_hz", type=float, default=0.3, show_default=True, help="Exponential line broadening, Hz.")
@click.option("--solvent", default=None, help="Solvent, when the file names none or the wrong one.")
@click.option("--phase", "phase", default=None, metavar="P0,P1", help="Manual phase in degrees instead of automatic phasing.")
@click.option("--anchor-h", type=int, default=None, help="Known number of observable protons to anchor the count to.")
@click.option("--save-spectrum", type=click.Path(path_type=str), default=None, help="Write ppm, real, imag arrays to FILE.npz.")
@click.option("--plot", "plot_path", type=click.Path(path_type=str), default=None, help="Draw the spectrum with regions to FILE.png.")
@user_errors
def process_command(path, as_json, size, lb_hz, solvent, phase, anchor_h, save_spectrum, plot_path):
    """Read, phase, reference and integrate one 1H recording and count its protons."""
    import json

    from nmrcheck.processing import ProcessingOptions, process
    from nmrcheck.processing.summary import processed_summary

    options = ProcessingOptions(lb_hz=lb_hz, size=size, solvent=solvent, phase=_phase_option(phase), anchor_h=anchor_h)
    processed = process(path, options)
    summary = processed_summary(processed)
    summary["options"] = options.as_dict()
    if save_spectrum:
        from nmrcheck.io.arrays import save_spectrum_npz

        save_spectrum_npz(save_spectrum, ppm=processed.spectrum.ppm, data=processed.spectrum.data)
    if plot_path:
        from nmrcheck.report.spectrum_plot import plot_processed

        plot_processed(processed, plot_path)
    if as_json:
        click.echo(json.dumps(summary, indent=2))
    else:
        from nmrcheck.report.process_text import format_processed

        click.echo(format_processed(summary))
