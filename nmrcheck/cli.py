"""Command line: thin wrappers that parse options, call the library and print; user errors become one line."""

from __future__ import annotations

import contextlib
import functools
import logging
import sys

import click

from nmrcheck import __version__
from nmrcheck.data import user_citations
from nmrcheck.errors import NmrcheckError
from nmrcheck.tolerances import DEFAULT_TOLERANCE_PPM

CONTEXT = {"help_option_names": ["-h", "--help"], "max_content_width": 100}


def _quiet_libraries() -> None:
    try:
        from rdkit import RDLogger

        RDLogger.DisableLog("rdApp.*")
    except ImportError:  # pragma: no cover - RDKit is a dependency
        pass


class Number(click.ParamType):
    """A finite number within bounds: ``nan``, ``inf`` and out-of-range values are refused by name."""

    name = "number"

    def __init__(self, lo: float | None = None, hi: float | None = None, *, integer: bool = False) -> None:
        self.lo, self.hi, self.integer = lo, hi, integer
        self.name = "integer" if integer else "number"

    def convert(self, value, param, ctx):
        import math

        if isinstance(value, (int, float)) and not isinstance(value, bool):
            v = value
        else:
            text = str(value).strip()
            try:
                v = int(text) if self.integer else float(text)
            except ValueError:
                self.fail(f"{value!r} is not {'a whole number' if self.integer else 'a number'}", param, ctx)
        if not math.isfinite(v):
            self.fail(f"{value!r} is not a finite number", param, ctx)
        if (self.lo is not None and v < self.lo) or (self.hi is not None and v > self.hi):
            self.fail(f"{value} is outside {self.lo:g}..{self.hi:g}" if self.lo is not None and self.hi is not None else f"{value} is out of range", param, ctx)
        return v


#: Finite numbers without bounds of their own (the library checks the physical range).
FINITE = Number()
POSITIVE = Number(0.0, 1e12)


def _debug_requested(ctx: click.Context | None) -> bool:
    import os

    if os.environ.get("NMRCHECK_DEBUG"):
        return True
    root = ctx.find_root() if ctx is not None else None
    return bool(root is not None and (root.obj or {}).get("debug"))


class GuardedGroup(click.Group):
    """The top-level command group: no exception reaches the user as a traceback.

    nmrcheck's own errors and failures of the machine (a full or read-only disk, a missing
    folder, a results database that cannot be written) become ``nmrcheck: <file>: <problem>``
    and exit status 2; anything unexpected becomes one line
    ``nmrcheck: internal error ...`` with exit status 3 and a hint to rerun with ``--debug``,
    which shows the traceback.
    """

    def invoke(self, ctx):
        from nmrcheck.errors import human_message

        try:
            return super().invoke(ctx)
        except (click.exceptions.Exit, click.exceptions.Abort, click.ClickException, SystemExit):
            raise
        except KeyboardInterrupt:
            click.echo("nmrcheck: interrupted", err=True)
            ctx.exit(130)
        except BrokenPipeError:
            # The reader of our output went away (e.g. `| head`): nothing more to say to it.
            import os

            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
            ctx.exit(141)
        except Exception as exc:  # noqa: BLE001 - the one place every failure is turned into a line
            from nmrcheck.errors import environment_problem

            if _debug_requested(ctx):
                raise
            if isinstance(exc, NmrcheckError) or environment_problem(exc) is not None:
                _echo_error(f"nmrcheck: {human_message(exc)}")
                ctx.exit(2)
            if isinstance(exc, MemoryError):
                _echo_error(f"nmrcheck: {human_message(exc)}")
                ctx.exit(3)
            _echo_error(f"nmrcheck: {human_message(exc)}; rerun with --debug (or NMRCHECK_DEBUG=1) to see the traceback, and please report it")
            ctx.exit(3)


@contextlib.contextmanager
def writing(path):
    """Name ``path`` in an OS error raised while writing it (a write() on a full disk names no file)."""
    try:
        yield
    except OSError as exc:
        if exc.filename is None:
            exc.filename = str(path)
        raise


def _echo_error(line: str) -> None:
    try:
        click.echo(line, err=True)
    except OSError:  # stderr closed or full: nothing more can be said
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


@click.group(cls=GuardedGroup, context_settings=CONTEXT)
@click.version_option(__version__, prog_name="nmrcheck")
@click.option("-v", "--verbose", count=True, help="More log output (repeat for debug).")
@click.option("--debug", is_flag=True, help="Show the full traceback of an unexpected failure (also NMRCHECK_DEBUG=1).")
@click.pass_context
def main(ctx: click.Context, verbose: int, debug: bool) -> None:
    """Triage 1H micro-NMR spectra and HRMS features of natural-product isolates.

    Results are screening aids, not identifications; decisions rest with the
    responsible chemist.
    """
    ctx.obj = {"debug": debug}
    level = logging.WARNING - 10 * min(verbose, 2)
    logging.basicConfig(level=level, format="%(levelname)s %(message)s", stream=sys.stderr)
    _quiet_libraries()


# --- commands are registered below, one block per subcommand --------------------------


_QUANT_OPTIONS = (
    click.option("--standard", help="Internal standard by name (see the standards table) or a label for --standard-range."),
    click.option("--standard-nmol", type=POSITIVE, help="Amount of the standard in the tube, nmol."),
    click.option("--standard-conc-mm", "--standard-mM", "standard_conc_mm", type=POSITIVE, help="Concentration of the standard in the tube, mM."),
    click.option("--standard-range", help="START:END ppm of a user-defined standard's signal."),
    click.option("--standard-h", type=Number(1, 5000, integer=True), help="Protons of the user-defined standard's signal."),
    click.option("--solvent-reference", is_flag=True, default=False, help="Use the residual solvent signal as the amount reference (needs --deuteration-pct and --volume-ul)."),
    click.option("--deuteration-pct", "--deuteration", "deuteration_pct", type=Number(0, 100), help="Solvent lot's deuteration grade, atom % D (e.g. 99.8)."),
    click.option("--calibration", type=click.Path(exists=True), help="Calibration recording of a known sample on the same probe (PULCON)."),
    click.option("--calibration-conc-mm", "--calibration-mM", "calibration_conc_mm", type=POSITIVE, help="Concentration of the calibration compound, mM."),
    click.option("--calibration-range", help="START:END ppm of the calibration signal."),
    click.option("--calibration-h", type=Number(1, 5000, integer=True), help="Protons of the calibration signal."),
    click.option("--volume-ul", type=POSITIVE, help="Solution volume in the tube, microlitres."),
    click.option("--experiment", help="Next experiment for the go/no-go, a name in the thresholds [default: 1H-13C HSQC]."),
    click.option("--thresholds", type=click.Path(exists=True), help="User thresholds file (CSV, JSON or TOML) replacing the defaults."),
    click.option("--required-ug", type=POSITIVE, help="Mass the next experiment needs (e.g. a bioassay), ug."),
)


def quant_options(func):
    """Add the amount-reference and go/no-go options; the command receives them as one ``quant`` (QuantOptions)."""
    names = ("standard", "standard_nmol", "standard_conc_mm", "standard_range", "standard_h", "solvent_reference", "deuteration_pct",
             "calibration", "calibration_conc_mm", "calibration_range", "calibration_h", "volume_ul", "experiment", "thresholds", "required_ug")

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        from nmrcheck.quant.options import QuantOptions

        return func(*args, quant=QuantOptions(**{n: kwargs.pop(n) for n in names}), **kwargs)

    for option in reversed(_QUANT_OPTIONS):
        wrapper = option(wrapper)
    return wrapper


# --- process ------------------------------------------------------------------------------


def _phase_option(value: str | None) -> tuple[float, float] | None:
    if value is None:
        return None
    from nmrcheck.errors import ParameterError

    import math

    try:
        p0, p1 = (float(x) for x in value.split(","))
    except ValueError:
        raise ParameterError(f"--phase: expected 'P0,P1' in degrees, got {value!r}") from None
    if not (math.isfinite(p0) and math.isfinite(p1)):
        raise ParameterError(f"--phase: {value!r} holds a value that is not a finite angle")
    return p0, p1


def _output_file(option: str, value: str | None) -> None:
    """Refuse an output path whose folder does not exist (before any work is done)."""
    if not value:
        return
    from pathlib import Path

    from nmrcheck.errors import ParameterError

    p = Path(value)
    if p.is_dir():
        raise ParameterError(f"{option}: {value} is a folder; give a file name")
    if not p.parent.is_dir():
        raise ParameterError(f"{option}: folder {p.parent} does not exist")


@main.command("process")
@click.argument("path", type=click.Path(path_type=str))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of the text summary.")
@click.option("--size", type=Number(256, 1 << 20, integer=True), default=None, help="Points after zero-filling (power of two, 256 to 1048576).")
@click.option("--lb", "lb_hz", type=Number(-5, 50), default=0.3, show_default=True, help="Exponential line broadening, Hz (-5 to 50).")
@click.option("--solvent", default=None, help="Solvent, when the file names none or the wrong one.")
@click.option("--phase", "phase", default=None, metavar="P0,P1", help="Manual phase in degrees instead of automatic phasing.")
@click.option("--anchor-h", type=Number(1, 5000, integer=True), default=None, help="Known number of observable protons to anchor the count to (1 to 5000).")
@click.option("--save-spectrum", type=click.Path(path_type=str), default=None, help="Write ppm, real, imag arrays to FILE.npz.")
@click.option("--plot", "plot_path", type=click.Path(path_type=str), default=None, help="Draw the spectrum with regions to FILE.png.")
@user_errors
@quant_options
def process_command(path, as_json, size, lb_hz, solvent, phase, anchor_h, save_spectrum, plot_path, quant):
    """Read, phase, reference and integrate one 1H recording and count its protons.

    With an amount reference (--standard, --solvent-reference or --calibration) also the
    amount per proton unit and the go/no-go for the next experiment.
    """
    import json
    from dataclasses import replace

    from nmrcheck.processing import ProcessingOptions, process
    from nmrcheck.processing.summary import processed_summary

    options = ProcessingOptions(lb_hz=lb_hz, size=size, solvent=solvent, phase=_phase_option(phase), anchor_h=anchor_h)
    _output_file("--plot", plot_path)
    _output_file("--save-spectrum", save_spectrum)
    if save_spectrum and not save_spectrum.endswith(".npz"):
        from nmrcheck.errors import ParameterError

        raise ParameterError(f"--save-spectrum: {save_spectrum} must end in .npz")
    processed = process(path, options)
    summary = processed_summary(processed)
    summary["options"] = options.as_dict()
    if quant.requested:
        amount = quant.amount(processed, processing=replace(options, phase=None, anchor_h=None, solvent=None))
        summary.update({k: v for k, v in quant.assess(amount, processed).as_dict().items() if k != "candidates"})
    if save_spectrum:
        from nmrcheck.io.arrays import save_spectrum_npz

        with writing(save_spectrum):
            save_spectrum_npz(save_spectrum, ppm=processed.spectrum.ppm, data=processed.spectrum.data)
    if plot_path:
        from nmrcheck.report.spectrum_plot import plot_processed

        with writing(plot_path):
            plot_processed(processed, plot_path)
    if as_json:
        click.echo(json.dumps(user_citations(summary), indent=2))
    else:
        from nmrcheck.report.process_text import format_processed

        click.echo(format_processed(summary))


# --- plate run / plate report -----------------------------------------------------------


@main.group("plate", context_settings=CONTEXT)
def plate_group() -> None:
    """Screen a 96- or 384-well plate from a manifest, resumably; report on it."""


@plate_group.command("run", context_settings=CONTEXT)
@click.argument("manifest", type=click.Path(dir_okay=False))
@click.option("--out", "out_dir", required=True, type=click.Path(file_okay=False), help="Output folder (results database, report). One run per folder at a time.")
@click.option("--workers", type=Number(1, 256, integer=True), default=None, help="Local worker processes, 1 to 256 [default: every core].")
@click.option("--well-timeout", default="120s", show_default=True, help="Time one well may take ('90s', '2min'; a bare number is seconds); a well past it is recorded as stopped.")
@click.option("--well-memory", default="4GB", show_default=True, help="Memory one local worker may map ('4GB', '512MB'); a well needing more is recorded as stopped.")
@click.option("--watch", is_flag=True, help="Keep running; screen recordings as they become complete.")
@click.option("--time-limit", "time_limit_h", type=Number(1e-6, 10000), default=None, help="Watch mode: stop after this many hours.")
@click.option("--poll", "poll_s", type=Number(0.05, 86400), default=10.0, show_default=True, help="Watch mode: seconds between looks at the plate folder.")
@click.option("--quiet-seconds", "quiet_s", type=Number(0, 86400), default=30.0, show_default=True, help="Watch mode: a full-size recording is read once unchanged this long (a JCAMP-DX file closed by its ##END= at once).")
@click.option("--redo", is_flag=True, help="Screen wells again even when they have a result for the same options and recording.")
@click.option("--layout", type=click.Choice(["96", "384"]), default=None, help="Plate format [default: from the well names].")
@click.option("--lb", "lb_hz", type=Number(-5, 50), default=None, help="Line broadening, Hz.")
@click.option("--mass-tolerance", "mass_tolerance_ppm", type=Number(0, 1000), default=None, help=f"HRMS tolerance, ppm [default: {DEFAULT_TOLERANCE_PPM:g}].")
@click.option("--library", "library", type=click.Path(exists=True, dir_okay=False), default=None, help="Known compounds (CSV/SMILES/SD file, or an index made from one): matches become candidates.")
@click.option("--genus", default=None, help="Genus of the extract's organism (ranks known compounds).")
@click.option("--family", default=None, help="Family of the extract's organism (ranks known compounds).")
@click.option("--retention-calibration", "retention_calibration", type=click.Path(exists=True, dir_okay=False), default=None,
              help="Reference compounds on the same gradient (CSV: rt_min, logp or smiles) for the retention check [default: fit on the plate].")
@click.option("--scheduler", default=None, help="Dask distributed scheduler address, e.g. tcp://host:8786 (needs the 'dask' extra), instead of local processes.")
@click.option("--no-report", is_flag=True, help="Do not write the HTML report and exports at the end.")
@click.option("--assay", "assay_path", type=click.Path(dir_okay=False), default=None, help="Bioassay readouts per well (CSV: well,value[,unit,threshold,hit_when,assay]) to join in the report.")
@click.option("--lcms", "lcms_run", type=click.Path(dir_okay=False), default=None, help="The extract's LC-MS run (mzML): each well's MS features come from it (the manifest's own entries win).")
@click.option("--timetable", type=click.Path(dir_okay=False), default=None, help="Fraction-collection timetable (CSV: well, start_min, end_min) for --lcms.")
@click.option("--collector-delay-min", "collector_delay_min", type=Number(0, 100), default=0.0, show_default=True, help="Time from the MS detector to the fraction collector, minutes.")
@click.option("--volume-ul", "volume_ul", type=Number(1, 2000), default=None, help="Solvent in each tube, uL [default: 35] (a manifest volume_ul column overrides it per well).")
@click.option("--deuteration-pct", "deuteration_pct", type=Number(90, 100), default=None, help="Atom % D of the solvent lot [default: 99.8] (manifest column deuteration_pct per well).")
@click.option("--standard", "standard", default=None, help="Internal standard in every tube (a name in the standards table); default: the residual solvent line.")
@click.option("--standard-nmol", "standard_nmol", type=Number(1e-3, 1e6), default=None, help="Internal standard per tube, nmol (with --standard; manifest column standard_nmol per well).")
@click.option("--experiment", "next_experiment", default=None, help="Next experiment the go/no-go is for [default: 1H-13C HSQC] (manifest column next_experiment per well).")
@user_errors
def plate_run(manifest, out_dir, workers, well_timeout, well_memory, watch, time_limit_h, poll_s, quiet_s, redo, layout, lb_hz, mass_tolerance_ppm, library, genus, family, retention_calibration, scheduler, no_report, assay_path, lcms_run, timetable, collector_delay_min,
              volume_ul, deuteration_pct, standard, standard_nmol, next_experiment) -> None:
    """Screen every well of MANIFEST into --out; rerunning resumes. Exit 0 when the run completed."""
    from dataclasses import replace

    from nmrcheck.plate import ScreenOptions, progress_for, read_manifest, run_plate
    from nmrcheck.plate.runner import RunInterrupted
    from nmrcheck.plate.workers import WellLimits, parse_duration, parse_memory
    from nmrcheck.processing import ProcessingOptions

    limits = WellLimits(time_s=parse_duration(well_timeout), memory_gb=parse_memory(well_memory))
    plate = read_manifest(manifest, layout=layout)
    if assay_path is not None:
        from nmrcheck.io.assay import read_assay

        read_assay(assay_path)  # a broken assay file stops the run before any well is screened
    lcms = None
    if lcms_run or timetable:
        from nmrcheck.ms.features import FeatureOptions
        from nmrcheck.plate.lcms import attach_run

        feature_options = FeatureOptions() if mass_tolerance_ppm is None else FeatureOptions(tolerance_ppm=mass_tolerance_ppm)
        plate, lcms = attach_run(plate, lcms_run, timetable, collector_delay_min=collector_delay_min, options=feature_options)
    processing = ProcessingOptions() if lb_hz is None else ProcessingOptions(lb_hz=lb_hz)
    options = ScreenOptions(processing=processing)
    if mass_tolerance_ppm is not None:
        options = replace(options, mass_tolerance_ppm=mass_tolerance_ppm)
    amount = {k: v for k, v in (("solvent_volume_ul", volume_ul), ("deuteration_pct", deuteration_pct), ("standard", standard),
                                 ("standard_nmol", standard_nmol), ("next_experiment", next_experiment)) if v is not None}
    if amount:
        options = replace(options, **amount)
    if library:
        from pathlib import Path

        from nmrcheck.ms.library import open_library

        index = open_library(library, cache_dir=Path(out_dir) / "library", workers=workers)
        click.echo(f"known compounds: {index.entries} in {index.database}" + (f" ({index.skipped} rows left out)" if index.skipped else ""), err=True)
        options = replace(options, library=index.database, genus=genus, family=family)
    if retention_calibration:
        from pathlib import Path

        options = replace(options, retention_calibration=str(Path(retention_calibration).resolve()))
    executor = client = None
    if scheduler:
        try:
            from distributed import Client
        except ImportError:
            raise click.UsageError("--scheduler needs Dask distributed: pip install 'nmrcheck[dask]'") from None
        try:
            client = Client(scheduler, timeout="30s")
        except (OSError, TimeoutError) as exc:
            raise click.UsageError(f"--scheduler {scheduler}: cannot reach the Dask scheduler ({exc})") from None
        executor = client.get_executor(pure=False)
    try:
        summary = run_plate(
            plate,
            out_dir,
            options=options,
            workers=workers,
            executor=executor,
            limits=limits,
            redo=redo,
            watch=watch,
            time_limit_s=time_limit_h * 3600 if time_limit_h else None,
            poll_s=poll_s,
            quiet_s=quiet_s,
            progress=progress_for(sys.stderr),
        )
    except RunInterrupted as exc:
        click.echo(f"nmrcheck: {exc}", err=True)
        sys.exit(128 + exc.signum)
    finally:
        if client is not None:
            client.close()
    if lcms is not None:
        from nmrcheck.plate.lcms import save_lcms

        save_lcms(out_dir, lcms)
        for group in lcms.groups:
            click.echo(f"MS/MS: {group.summary}")
    if not no_report:
        from nmrcheck.report.plate_report import write_plate_report

        with writing(out_dir):
            report = write_plate_report(out_dir, assay=assay_path)
        click.echo(f"report: {report}")
    click.echo(summary.describe())


@plate_group.command("features", context_settings=CONTEXT)
@click.argument("run", type=click.Path(dir_okay=False))
@click.argument("timetable", type=click.Path(dir_okay=False))
@click.option("--collector-delay-min", "collector_delay_min", type=Number(0, 100), default=0.0, show_default=True, help="Time from the MS detector to the fraction collector, minutes.")
@click.option("--manifest", "existing", type=click.Path(dir_okay=False), default=None, help="An existing manifest to mix with: its non-empty cells win.")
@click.option("--spectrum", default="fids/{well}/1", show_default=True, help="Recording path of wells the existing manifest does not name.")
@click.option("--out", "out_path", type=click.Path(dir_okay=False), default=None, help="Write the plate manifest here (CSV).")
@click.option("--json", "as_json", is_flag=True, help="Print every well's features and the MS/MS groups as JSON.")
@click.option("--mass-tolerance", "mass_tolerance_ppm", type=Number(0, 100), default=DEFAULT_TOLERANCE_PPM, show_default=True, help="HRMS tolerance of one ion's m/z, ppm.")
@user_errors
def plate_features(run, timetable, collector_delay_min, existing, spectrum, out_path, as_json, mass_tolerance_ppm) -> None:
    """Per-well MS features from the extract's LC-MS RUN (mzML) and the fraction TIMETABLE; optionally write the manifest."""
    import json

    from nmrcheck.ms.features import FeatureOptions
    from nmrcheck.plate.lcms import analyse_run, features_text, manifest_rows, write_manifest

    lcms = analyse_run(run, timetable, collector_delay_min=collector_delay_min, options=FeatureOptions(tolerance_ppm=mass_tolerance_ppm))
    if out_path:
        from nmrcheck.plate import read_manifest

        old = read_manifest(existing) if existing else None
        write_manifest(out_path, manifest_rows(lcms, spectrum=spectrum, existing=old), comment=f"MS features from {run} and {timetable}")
    if as_json:
        click.echo(json.dumps({"plate": lcms.as_dict(), "wells": {w: lcms.well_record(w) for w in lcms.wells}}, indent=1))
    else:
        click.echo(features_text(lcms))
    if out_path:
        click.echo(f"manifest: {out_path}", err=as_json)


@plate_group.command("report", context_settings=CONTEXT)
@click.argument("out_dir", type=click.Path(file_okay=False, exists=True))
@click.option("--title", default=None, help="Title of the page.")
@click.option("--assay", "assay_path", type=click.Path(dir_okay=False), default=None,
              help="Bioassay readouts per well (CSV: well,value[,unit,threshold,hit_when,assay]); kept in OUT_DIR for later reports.")
@user_errors
def plate_report(out_dir, title, assay_path) -> None:
    """Write report.html, results.csv, results.json and NMReDATA records from the results in OUT_DIR."""
    from nmrcheck.report.plate_report import write_plate_report

    with writing(out_dir):
        report = write_plate_report(out_dir, title=title, assay=assay_path)
    click.echo(f"report: {report}")


# --- demo -----------------------------------------------------------------------------------


@main.command("demo", context_settings=CONTEXT)
@click.option("--out", "out_dir", type=click.Path(file_okay=False), default="nmrcheck-demo", show_default=True, help="Folder for the demo plate and its results.")
@click.option("--workers", type=Number(1, 256, integer=True), default=None, help="Local worker processes, 1 to 256 [default: every core].")
@user_errors
def demo(out_dir, workers) -> None:
    """Build an invented 36-well plate of synthetic spectra and screen it end to end."""
    from nmrcheck.demo import run_demo
    from nmrcheck.plate import progress_for

    summary, report, seconds = run_demo(out_dir, workers=workers, progress=progress_for(sys.stderr))
    click.echo(f"demo plate screened in {seconds:.1f} s: {summary.describe()}")
    from nmrcheck.plate.lcms import lcms_summary

    for line in lcms_summary(report.parent):
        click.echo(line)
    click.echo(f"report: {report}")


# --- quant: amount in the tube and go/no-go ------------------------------------------------


@main.command("quant", context_settings=CONTEXT)
@click.argument("spectrum", type=click.Path(exists=True))
@click.option("--range", "analyte_range", multiple=True, help="START:END ppm of the analyte signal (repeatable; default: all counted regions).")
@click.option("--analyte-h", type=Number(0, 5000), help="Protons the analyte ranges hold per molecule.")
@click.option("--candidate", multiple=True, help="Candidate formula, SMILES or molar mass (g/mol); repeatable.")
@click.option("--longest-t1", type=Number(0, 10000), help="Longest T1 expected for the analyte, s (default 3 s) for the relaxation warning.")
@click.option("--json", "as_json", is_flag=True, help="Print the result as JSON.")
@user_errors
@quant_options
def quant_command(spectrum, analyte_range, analyte_h, candidate, longest_t1, as_json, quant):
    """Estimate how much compound SPECTRUM's tube holds, and whether it is enough for the next experiment."""
    import json

    from nmrcheck.errors import ParameterError
    from nmrcheck.processing import process
    from nmrcheck.quant import parse_ppm_range

    if not quant.requested:
        raise ParameterError("reference: give exactly one of --standard, --solvent-reference or --calibration")
    processed = process(spectrum)
    ranges = [parse_ppm_range(r, "--range") for r in analyte_range] or None
    amount = quant.amount(processed, analyte_range_ppm=ranges, analyte_h=analyte_h, longest_t1_s=longest_t1)
    q = quant.assess(amount, processed, candidates=[(float(c) if c.replace(".", "", 1).isdigit() else c, None) for c in candidate])
    candidates = [c for c, _ in q.candidates]
    rec = q.recommendation
    result = {
        "spectrum": str(spectrum),
        "amount": amount.as_dict(),
        "candidates": [c.as_dict() for c in candidates],
        "snr": round(amount.snr, 1),
        "recommendation": rec.as_dict(),
    }
    if as_json:
        click.echo(json.dumps(user_citations(result), indent=2))
        return
    a = amount
    per = "nmol" if a.nmol_per_proton is not None else "mM"
    value = a.nmol_per_proton if a.nmol_per_proton is not None else a.conc_mM_per_proton
    click.echo(f"{spectrum}: {value:.3g} {per} per {a.analyte_h:g} H unit ({a.analyte_h_source}) +- {a.uncertainty_pct:.1f} % ({a.method}; SNR {a.snr:.0f})")
    click.echo(f"  reference: {a.reference}")
    for c in candidates:
        bits = [f"{c.nmol:.3g} nmol" if c.nmol is not None else None, f"{c.ug:.3g} ug" if c.ug is not None else None, f"{c.conc_mM:.3g} mM" if c.conc_mM is not None else None]
        click.echo(f"  {c.label} (M {c.molar_mass:.2f}, {c.n_h:g} H): {', '.join(b for b in bits if b)} +- {c.uncertainty_pct:.1f} %")
    click.echo(f"  {rec.experiment}: {rec.decision.upper()}" + (f"; {rec.scans_needed} scans ({rec.hours_needed:.1f} h) for SNR {rec.target_snr:g}" if rec.scans_needed and rec.hours_needed is not None else ""))
    for r in rec.reasons:
        click.echo(f"    - {r}")
    for w in a.warnings:
        click.echo(f"  warning: {w}")


@main.command("check", context_settings=CONTEXT)
@click.argument("spectrum", type=click.Path(exists=True))
@click.option("--formula", "formulas", multiple=True, help="Candidate formula (repeatable), e.g. C10H12O.")
@click.option("--smiles", "smiles", multiple=True, help="Candidate SMILES, optionally followed by a name (repeatable).")
@click.option("--candidates", "candidates_file", type=click.Path(exists=True), help="SMILES, MOL, SDF or CSV file of candidates.")
@click.option("--mz", type=Number(1, 100000), multiple=True, help="Observed m/z of the MS feature (repeat with one --ion each).")
@click.option("--ion", multiple=True, help="Ion species of each --mz, e.g. [M+H]+.")
@click.option("--ppm", "ppm_tol", type=Number(0, 1000), default=DEFAULT_TOLERANCE_PPM, show_default=True, help="Mass tolerance, ppm.")
@click.option("--isotopes", help="Observed isotope intensities of the first ion, e.g. 100,11.2,0.9.")
@click.option("--solvent", help="Override the solvent recorded in the file.")
@click.option("--json", "as_json", is_flag=True, help="Print JSON.")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False), help="Save an overlay of predicted shifts (PNG).")
@click.option("--library", "library", type=click.Path(exists=True, dir_okay=False), default=None, help="Known compounds (CSV/SMILES/SD file or index): those at the feature's mass become candidates.")
@click.option("--genus", default=None, help="Genus of the organism (ranks known compounds).")
@click.option("--family", default=None, help="Family of the organism (ranks known compounds).")
@click.option("--rt", "rt_min", type=Number(0, 1000), default=None, help="Retention time of the compound, minutes (with --retention-calibration).")
@click.option("--retention-calibration", "retention_calibration", type=click.Path(exists=True, dir_okay=False), default=None,
              help="Reference compounds on the same gradient (CSV: rt_min, logp or smiles): checks --rt against each structure's Crippen logP.")
@user_errors
@quant_options
def check_command(spectrum, formulas, smiles, candidates_file, mz, ion, ppm_tol, isotopes, solvent, as_json, plot_path, library, genus, family, rt_min, retention_calibration, quant):
    """Check candidate formulas and structures against SPECTRUM and an MS feature.

    With an MS feature and no candidates, the formula engine proposes them. The well's purity
    (one compound or several) comes from the best structure's assignment. With an amount
    reference (--standard, --solvent-reference or --calibration) the best candidate that is not
    inconsistent gets its amount in the tube (on its own signals and protons) and the go/no-go
    for the next experiment, or a one-line reason why no amount is given.
    """
    from nmrcheck.errors import ParameterError as _ParameterError
    from nmrcheck.processing import process as _process
    from nmrcheck.report.check_text import verdicts_json, verdicts_text
    from nmrcheck.validate import MsFeature, candidates_from_file, candidates_from_ms, candidates_from_strings, check_candidates, evidence_from

    if len(mz) != len(ion):
        raise _ParameterError(f"--mz/--ion: give one --ion per --mz ({len(mz)} m/z, {len(ion)} ions)")
    _output_file("--plot", plot_path)
    ms = None
    if mz:
        iso = None
        if isotopes:
            from nmrcheck.chem.isotopes import parse_intensities

            iso = parse_intensities(isotopes)
        ms = MsFeature(tuple(zip(mz, ion)), ppm=ppm_tol, isotopes=iso)
    processed = _process(spectrum, **({"solvent": solvent} if solvent else {}))
    cands, problems = candidates_from_strings(formulas, smiles)
    if candidates_file:
        more, bad = candidates_from_file(candidates_file)
        cands, problems = cands + more, problems + bad
    if library and ms is not None:
        from nmrcheck.ms.library import KnownCompoundLibrary, library_structures, open_library

        with KnownCompoundLibrary(open_library(library).database) as known:
            lookup = known.lookup(list(ms.ions), ppm=ppm_tol, genus=genus, family=family)
        click.echo(f"known compounds: {lookup.summary}", err=True)
        more, bad = candidates_from_strings((), [f"{s} {label}" for label, s in library_structures(lookup)])
        cands, problems = cands + more, problems + bad
    if not cands and not problems and ms is not None:
        cands = candidates_from_ms(ms)
    if not cands:
        for p in problems:
            click.echo(f"nmrcheck: skipped {p.label} ({p.origin}): {p.problem}", err=True)
        raise _ParameterError("no usable candidate: give --formula, --smiles, --candidates or an MS feature (--mz/--ion)")
    evidence = evidence_from(processed, ms)
    verdicts = check_candidates(cands, evidence)
    if rt_min is not None or retention_calibration:
        if rt_min is None or not retention_calibration:
            raise _ParameterError("--rt and --retention-calibration: give both to check retention")
        from nmrcheck.validate.retention import calibration_model, with_retention

        verdicts = with_retention(verdicts, rt_min, calibration_model(retention_calibration))
    if plot_path:
        from nmrcheck.report.check_plot import plot_check

        with writing(plot_path):
            plot_check(processed, verdicts, plot_path)
    from nmrcheck.validate import amount_basis, purity_of

    amounts = quant.for_candidate(processed, amount_basis(verdicts, evidence)) if quant.requested else None
    render = verdicts_json if as_json else verdicts_text
    click.echo(render(verdicts, problems, evidence=evidence, amounts=amounts, purity=purity_of(verdicts, evidence)))


# --- formulas -----------------------------------------------------------------------------


@main.command("formulas", context_settings={**CONTEXT, "ignore_unknown_options": True})
@click.argument("mz", nargs=-1, required=True)
@click.option("--ion", "ions", multiple=True, help="Ion species of each MZ, in order, e.g. '[M+H]+' (repeatable).")
@click.option("--ppm", type=Number(0, 1000), default=DEFAULT_TOLERANCE_PPM, show_default=True, help="Mass tolerance per ion, ppm (0: use --mda only).")
@click.option("--mda", type=Number(0, 10000), default=None, help="Mass tolerance per ion, mDa (with --ppm the larger applies).")
@click.option("--isotopes", help="Observed intensities of M+0, M+1, ... of the first ion, e.g. '100,16.8,2.3'.")
@click.option("--elements", help="Element ranges, e.g. 'C0-80 H0-150 N0-10 O0-40 S0-3 Cl0-2' (default CHNOPS).")
@click.option("--rules", type=click.Choice(["common", "extended", "valence", "none"]), default="common", show_default=True,
              help="Filter preset: golden rules with common or extended ratio ranges, valence rules only, or none.")
@click.option("--no-prior", is_flag=True, help="Score without the natural-product element prior.")
@click.option("--h-range", "h_range", help="Protons the 1H spectrum shows, LOW-HIGH (e.g. 17-19): bounds and scores the H count.")
@click.option("--max", "max_candidates", type=Number(1, 10000, integer=True), default=20, show_default=True, help="Candidates shown at most.")
@click.option("--json", "as_json", is_flag=True, help="Print a JSON list of candidates.")
@user_errors
def formulas_command(mz, ions, ppm, mda, isotopes, elements, rules, no_prior, h_range, max_candidates, as_json):
    """Ranked molecular formulas of the neutral compound behind MZ (one or more ions of one feature).

    Give one --ion per MZ; all must agree on one neutral mass.
    """
    from nmrcheck.chem.candidates import formula_search
    from nmrcheck.errors import ParameterError
    from nmrcheck.report.formulas_text import format_search, search_json

    values = []
    for text in mz:
        if text.startswith("--"):
            raise ParameterError(f"unknown option {text}")
        try:
            value = float(text)
        except ValueError:
            raise ParameterError(f"m/z {text!r}: not a number") from None
        if value != value or value in (float("inf"), float("-inf")):  # the library names the other bounds
            raise ParameterError(f"m/z {text!r}: not a finite number")
        values.append(value)
    if not ions:
        raise ParameterError("--ion: give the ion species of each m/z, e.g. --ion '[M+H]+'")
    if len(ions) != len(values):
        raise ParameterError(f"--ion: give one --ion per m/z ({len(values)} m/z, {len(ions)} --ion)")
    search = formula_search(
        list(zip(values, ions)),
        ppm=ppm or None,
        mda=mda,
        isotopes=isotopes,
        elements=elements,
        rules=rules,
        max_candidates=max_candidates,
        prior=None if no_prior else "natural_products",
        h_range=_h_range(h_range),
    )
    click.echo(search_json(search) if as_json else format_search(search))


def _h_range(text: str | None) -> tuple[float, float] | None:
    """'17-19' or '18' as a (low, high) proton range."""
    from nmrcheck.errors import ParameterError

    if not text:
        return None
    low, sep, high = text.partition("-")
    try:
        values = (float(low), float(high) if sep else float(low))
    except ValueError:
        raise ParameterError(f"--h-range {text!r}: give LOW-HIGH proton counts, e.g. 17-19") from None
    return values


# --- tables: the reference tables a user can name -------------------------------------------------


@main.command("tables", context_settings=CONTEXT)
@click.argument("names", nargs=-1, type=click.Choice(["standards", "solvents", "ions", "experiments"]))
@click.option("--json", "as_json", is_flag=True, help="Print the tables as JSON.")
@user_errors
def tables_command(names, as_json) -> None:
    """List the reference tables: internal standards, solvents, ion species, next experiments (all when none is named)."""
    from nmrcheck.report.reference_tables import reference_tables, tables_text

    tables = reference_tables(names)
    if as_json:
        import json

        click.echo(json.dumps(tables, indent=1, ensure_ascii=False))
    else:
        click.echo(tables_text(tables), nl=False)
