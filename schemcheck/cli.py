"""The ``schemcheck`` command: a thin click layer over one library call per command."""

from __future__ import annotations

import functools
import os
import sys
from collections.abc import Callable
from typing import TYPE_CHECKING, Any

import click

from schemcheck import __version__
from schemcheck.errors import SchemcheckError
from schemcheck.report.formats import FORMATS

if TYPE_CHECKING:
    from schemcheck.run.shard import Shard

EXIT_FINDINGS = 1
EXIT_BAD_INPUT = 2
MAX_SEED = 2**63 - 1  # as in a settings file (TOML's largest whole number)

# One BLAS thread per process (before numpy is first imported): an audit's linear algebra
# is many small products, which extra threads only slow down (each hand-off stalls while
# the other cores are busy), and a batch runs one worker process per core. A value the
# user set is kept.
for _variable in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_variable, "1")


def _format_option(choices: tuple[str, ...], default: str) -> Callable[[Any], Any]:
    return click.option("--format", "fmt", type=click.Choice(choices), default=default,
                        show_default=True, help="Output format.")


def _reports_errors(command: Callable[..., Any]) -> Callable[..., Any]:
    """Turn the project's errors into one 'Error: ...' line and exit status 2."""

    @functools.wraps(command)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        try:
            return command(*args, **kwargs)
        except SchemcheckError as error:
            detail = error.detail() if hasattr(error, "detail") else str(error)
            click.echo(f"Error: {detail}", err=True)
            sys.exit(EXIT_BAD_INPUT)

    return wrapper


class _OptionError(SchemcheckError):
    """An option names a file that cannot be used."""

    def __init__(self, option: str, error: SchemcheckError) -> None:
        super().__init__(f"{option}: {error}")


def _json(data: Any) -> str:
    """Indented for a person at a terminal; compact (and several times faster, via the C
    encoder) when piped to a program."""
    from schemcheck.report.json import to_data

    return _plain_json(to_data(data))


def _plain_json(data: Any) -> str:
    """``data`` already plain JSON data (strings, numbers, lists, dicts), as :func:`_json`
    writes it."""
    import json

    indent = 2 if sys.stdout.isatty() else None
    # strict JSON: a NaN or Infinity would be a bug of ours, never written as a number;
    # plain data is a tree (no container holds itself), so no check for cycles
    return json.dumps(data, indent=indent, ensure_ascii=False, allow_nan=False,
                      check_circular=False)


def _emit(text: str) -> None:
    click.echo(text, nl=not text.endswith("\n"))


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="schemcheck")
def main() -> None:
    """Audit the DC error budget of op-amp stages in KiCad schematics.

    \b
    Example:
      schemcheck audit fixtures/demo/frontend.kicad_sch --format text
    """


@main.command()
@click.argument("path", type=click.Path(dir_okay=False, path_type=str))
@_format_option(("json", "text"), "json")
@_reports_errors
def netlist(path: str, fmt: str) -> None:
    """Print the nets and parts of a design.

    PATH is a root schematic (.kicad_sch; its child sheets are read too) or a netlist
    exported by the schematic editor (S-expression .net or the XML form).

    \b
    Example:
      schemcheck netlist board.kicad_sch --format json > nets.json
    """
    from schemcheck.circuit.load import load_netlist

    result = load_netlist(path)
    if fmt == "json":
        _emit(_plain_json(result.to_dict()))  # plain data already: no model to convert
    else:
        from schemcheck.report.netlist_text import netlist_text

        _emit(netlist_text(result))
    for error in result.errors:
        click.echo(f"Error: {error}", err=True)
    if fmt == "json":  # the text format lists them itself
        for warning in result.warnings:
            click.echo(f"Warning: {warning}", err=True)
    if result.errors:
        sys.exit(EXIT_BAD_INPUT)


def _shard_option(_ctx: click.Context, _param: click.Parameter,
                  value: str | None) -> Shard | None:
    from schemcheck.run.shard import Shard

    if value is None:
        return None
    try:
        return Shard.parse(value)
    except SchemcheckError as error:
        raise click.BadParameter(str(error).removeprefix("<input>: ")) from None


def _output_option(command: Callable[..., Any]) -> Callable[..., Any]:
    return click.option("--output", "-o", "output",
                        type=click.Path(dir_okay=False, path_type=str), default=None,
                        help="Write the report to FILE instead of standard output.")(command)


def _fail_on_option(command: Callable[..., Any]) -> Callable[..., Any]:
    return click.option("--fail-on", "fail_on", type=click.Choice(("info", "warning", "error")),
                        default="error", show_default=True,
                        help="Exit with status 1 when a finding of this severity or worse is "
                             "found.")(command)


@main.command()
@click.argument("paths", nargs=-1, type=str)
@click.option("--format", "fmt", type=click.Choice(tuple(FORMATS)), default=None,
              help="Output format. Default: text (the stage table) on a terminal; json when "
                   "the output is piped, redirected or written with --output.")
@_output_option
@click.option("--temp", "temp", metavar="MIN:MAX", default=None,
              help="Operating temperature range in °C (default 0:70).")
@click.option("--parts", "parts", type=click.Path(dir_okay=False, path_type=str), default=None,
              help="Parts library (TOML) with op-amp parameters.")
@click.option("--budget", "budget", metavar="VOLTS", default=None,
              help="Default output error budget for stages without a DC_Budget field (e.g. 5mV).")
@click.option("--samples", "samples", type=click.IntRange(0, 1_000_000), default=None,
              help="Monte Carlo samples per network (default 10000; 0 turns it off).")
@click.option("--seed", "seed", type=click.IntRange(0, MAX_SEED), default=None,
              help="Monte Carlo seed, a whole number from 0 (default 1).")
@click.option("--mc-solve", "mc_solve", type=click.Choice(("update", "full")), default=None,
              help="How each Monte Carlo sample is solved: 'update' (default; the nominal "
                   "solution with low-rank resistor updates) or 'full' (a full solve per "
                   "sample; slower, the reference).")
@click.option("--settings", "settings_path", type=click.Path(dir_okay=False, path_type=str),
              default=None, help="Settings file to use instead of schemcheck.toml beside "
                                 "each design.")
@click.option("--jobs", "-j", "jobs", type=click.IntRange(1, 256), default=None,
              help="Worker processes (default: the machine's cores).")
@_fail_on_option
@click.option("--no-cache", "no_cache", is_flag=True, help="Audit everything afresh.")
@click.option("--cache-file", "cache_file", type=click.Path(dir_okay=False, path_type=str),
              default=None, help="Results database (default: in the user cache folder).")
@click.option("--changed-since", "changed_since", metavar="REV", default=None,
              help="Only designs any of whose files (sheets, settings, parts library) differ "
                   "between the git revision REV and the working tree.")
@click.option("--staged", "staged", is_flag=True,
              help="Only designs any of whose files are staged for commit (git).")
@click.option("--shard", "shard", metavar="K/N", default=None, callback=_shard_option,
              help="Audit only the K-th of N stable parts of the designs (a CI matrix); "
                   "join the reports with 'schemcheck merge'.")
@click.option("--estimate-missing", "estimate_missing", is_flag=True,
              help="Fill missing op-amp figures from class values by input type (orders of "
                   "magnitude; every such figure is marked 'estimate (class ...)').")
@click.option("--charts", "charts", is_flag=True,
              help="Keep what the html format draws (each stage's error over the temperature "
                   "range, its Monte Carlo histogram) in the report; implied by --format "
                   "html. For JSON reports merged into an html report later.")
@_reports_errors
def audit(paths: tuple[str, ...], fmt: str, output: str | None, temp: str | None,
          parts: str | None, budget: str | None, samples: int | None, seed: int | None,
          mc_solve: str | None, settings_path: str | None, jobs: int | None, fail_on: str,
          no_cache: bool,
          cache_file: str | None, changed_since: str | None, staged: bool,
          shard: Shard | None, estimate_missing: bool, charts: bool) -> None:
    """Audit the DC output error of every op-amp stage of one or many designs.

    PATHS are schematics, exported netlists, project folders or folders of many
    projects (searched recursively; child sheets are audited through their root).
    Settings come from schemcheck.toml beside each design; options override it.
    With --changed-since or --staged, PATHS default to the current folder.

    Parts libraries: the user's (parts.toml in the user config folder), the project's,
    then --parts; a later one wins.

    Exit status: 0 no finding at or above --fail-on, 1 such findings, 2 unreadable
    input or bad usage.

    \b
    Example:
      schemcheck audit frontend.kicad_sch --temp -40:85 --parts opamps.toml --format text
      schemcheck audit designs/ --jobs 4 --format markdown --output checklist.md
      schemcheck audit --changed-since origin/main --format sarif --output audit.sarif
      schemcheck audit designs/ --shard 2/4 --output shard2.json
      schemcheck audit frontend.kicad_sch --format html --output frontend.html
    """
    from schemcheck.io.discover import find_designs
    from schemcheck.io.files import regular_file
    from schemcheck.run.batch import Progress, audit_paths
    from schemcheck.run.runner import options_to_overrides

    if changed_since is not None and staged:
        raise click.UsageError("--changed-since and --staged each choose the designs to "
                               "audit: give one of them")
    if not paths:
        if changed_since is None and not staged:
            raise click.UsageError("Missing argument 'PATHS...' (or give --changed-since REV "
                                   "or --staged to audit changed designs under the current "
                                   "folder).")
        paths = (".",)
    if fmt is None:
        fmt = "text" if not output and sys.stdout.isatty() else "json"

    for option, path, what in (("--parts", parts, "parts library"),
                               ("--settings", settings_path, "settings file")):
        if path is not None:
            try:
                regular_file(path, what)
            except SchemcheckError as problem:
                raise _OptionError(option, problem) from None
    overrides = options_to_overrides(temp=temp, parts=parts, budget=budget, samples=samples,
                                     seed=seed, estimate_missing=estimate_missing,
                                     mc_solve=mc_solve)
    if charts or fmt == "html":
        overrides["charts"] = True
    designs, missing = find_designs(list(paths))
    if changed_since is not None or staged:
        from schemcheck.run.changes import changed_files, touched_designs

        changed = changed_files(list(paths), changed_since)
        designs = touched_designs(designs, changed, overrides=overrides,
                                  settings_path=settings_path)
        if not designs:
            what = (f"changed since {changed_since}" if changed_since is not None
                    else "staged for commit")
            click.echo(f"No design has a file {what}; nothing to audit.", err=True)
    shard_info = None
    if shard is not None:
        from schemcheck.run.shard import split

        designs, missing, shard_info = split(designs, missing, shard)
    cache = None
    if not no_cache:
        from schemcheck.run.cache import CacheUnavailable, ResultCache

        try:
            cache = ResultCache(cache_file)
        except CacheUnavailable as error:
            click.echo(f"Warning: {error}; auditing without the results cache", err=True)
    progress = Progress()
    try:
        report = audit_paths(list(paths), overrides=overrides, settings_path=settings_path,
                             jobs=jobs, cache=cache, progress=progress,
                             found=(designs, missing))
    finally:
        progress.close()
        if cache is not None:
            cache.close()
    if shard_info is not None:
        report["shard"] = shard_info
    _finish(report, fmt, output, fail_on)


@main.command()
@click.argument("reports", nargs=-1, required=True,
                type=click.Path(dir_okay=False, path_type=str))
@_format_option(tuple(FORMATS), "json")
@_output_option
@_fail_on_option
@_reports_errors
def merge(reports: tuple[str, ...], fmt: str, output: str | None, fail_on: str) -> None:
    """Join the JSON reports of 'schemcheck audit --shard K/N' into one report.

    Given every shard of one run, in any order, the result (and the exit status) is that
    of the designs audited at once. Reports without --shard are joined in the order
    given. Exit status as for audit.

    \b
    Example:
      schemcheck merge shard1.json shard2.json shard3.json --format sarif -o audit.sarif
    """
    from schemcheck.run.shard import merge_reports, read_report

    _finish(merge_reports([(path, read_report(path)) for path in reports]), fmt, output,
            fail_on)


def _finish(report: dict[str, Any], fmt: str, output: str | None, fail_on: str) -> None:
    """Write ``report``, repeat its warnings and errors on standard error, exit."""
    from schemcheck.run.batch import exit_status, public

    report = public(report)
    text = _render(report, fmt, output)
    if output:
        from schemcheck.io.files import write_text

        write_text(output, text)
    else:
        _emit(text)
    for warning in report.get("warnings", []):
        click.echo(f"Warning: {warning}", err=True)
    for design in report["designs"]:
        for error in design["errors"]:
            click.echo(f"Error: {error}", err=True)
        for warning in design.get("warnings", []):
            click.echo(f"Warning: {warning}", err=True)
    sys.exit(exit_status(report, fail_on))


def _render(report: dict[str, Any], fmt: str, output: str | None) -> str:
    from schemcheck.report.formats import render

    if fmt == "json" and not output and not sys.stdout.isatty():
        return _json(report)  # compact when piped to a program, as the netlist command
    base = os.path.dirname(os.path.abspath(output)) if output else os.getcwd()
    return render(report, fmt, base)


@main.command()
@click.argument("csv_file", type=click.Path(dir_okay=False, path_type=str))
@_format_option(("json", "text"), "text")
@click.option("--parts", "parts", type=click.Path(dir_okay=False, path_type=str), default=None,
              help="Parts library (TOML) to write the measured entry into.")
@click.option("--part", "part", default=None, help="Entry name in the parts library.")
@click.option("--dry-run", "dry_run", is_flag=True, help="Show the library change; write nothing.")
@click.option("--skip-bad-rows", "skip_bad_rows", is_flag=True,
              help="Leave out rows that fail the checks (and list them) instead of refusing.")
@_reports_errors
def bench(csv_file: str, fmt: str, parts: str | None, part: str | None, dry_run: bool,
          skip_bad_rows: bool) -> None:
    """Turn test-loop measurements into op-amp parameters (Vos, Ib+, Ib-, Ib, Ios, drift).

    CSV columns: sample, temp_c, v1, v2, v3, optional v4, gain, rs, resolution, optional
    rail. Exit status: 0 success, 1 rows failed the checks, 2 unreadable file.

    \b
    Example:
      schemcheck bench loop.csv --parts opamps.toml --part LX-B27 --dry-run
    """
    from schemcheck.characterise.command import bench_text, characterise_file

    if (parts is None) != (part is None):
        click.echo("Error: --parts and --part go together: name the library and the entry",
                   err=True)
        sys.exit(EXIT_BAD_INPUT)
    report = characterise_file(csv_file, parts=parts, part=part, dry_run=dry_run,
                               skip_bad_rows=skip_bad_rows)
    _emit(_json(report) if fmt == "json" else bench_text(report))
    sys.exit(EXIT_FINDINGS if report["problems"] else 0)


@main.group()
def parts() -> None:
    """Op-amp part data: what is missing, a library skeleton to fill, a library checked.

    \b
    Example:
      schemcheck parts missing designs/
      schemcheck parts skeleton designs/ -o opamps.toml
      schemcheck parts check opamps.toml
    """


def _parts_options(command: Callable[..., Any]) -> Callable[..., Any]:
    command = click.option("--settings", "settings_path", default=None,
                           type=click.Path(dir_okay=False, path_type=str),
                           help="Settings file to use instead of schemcheck.toml beside "
                                "each design.")(command)
    return click.option("--parts", "parts_file", default=None,
                        type=click.Path(dir_okay=False, path_type=str),
                        help="Parts library laid over the user's and the project's.")(command)


def _missing(paths: tuple[str, ...], parts_file: str | None,
             settings_path: str | None) -> dict[str, Any]:
    from schemcheck.run.parts import missing_parts
    from schemcheck.run.runner import options_to_overrides

    report = missing_parts(list(paths), overrides=options_to_overrides(parts=parts_file),
                           settings_path=settings_path)
    for error in report["errors"]:
        click.echo(f"Error: {error}", err=True)
    return report


@parts.command("missing")
@click.argument("paths", nargs=-1, required=True, type=str)
@_format_option(("json", "text"), "text")
@_parts_options
@_reports_errors
def parts_missing(paths: tuple[str, ...], fmt: str, parts_file: str | None,
                  settings_path: str | None) -> None:
    """List the op-amp part numbers with no Vos, Ib or Ios across the designs.

    For each: the units and designs using it, how it would be matched (Value,
    part-number field, lib_id symbol, family) and the libraries read. Exit status 0,
    or 2 when a design or library could not be read.

    \b
    Example:
      schemcheck parts missing designs/ --parts opamps.toml
    """
    report = _missing(paths, parts_file, settings_path)
    if fmt == "json":
        _emit(_json(report))
    else:
        from schemcheck.report.parts_text import missing_text

        _emit(missing_text(report))
    sys.exit(EXIT_BAD_INPUT if report["errors"] else 0)


@parts.command("skeleton")
@click.argument("paths", nargs=-1, required=True, type=str)
@click.option("--output", "-o", "output", type=click.Path(dir_okay=False, path_type=str),
              default=None, help="Library to append the entries to (created if absent); "
                                 "its content and comments are kept.")
@_parts_options
@_reports_errors
def parts_skeleton(paths: tuple[str, ...], output: str | None, parts_file: str | None,
                   settings_path: str | None) -> None:
    """Write a commented TOML entry to fill for every op-amp part number with no data.

    Each entry names the units using it, how it is matched and its family key, with
    every figure's meaning and unit and empty typ/max to fill from the datasheet.
    Without -o the library is printed. Exit status 0, or 2 when a design or library
    could not be read.

    \b
    Example:
      schemcheck parts skeleton designs/ -o opamps.toml
    """
    from schemcheck.io.partslib_write import skeleton_library, write_library

    report = _missing(paths, parts_file, settings_path)
    wanted = [p for p in report["parts"] if p["field"] != "Reference"]
    _, text, added, present = skeleton_library(output, wanted)
    if output:
        os.makedirs(os.path.dirname(os.path.abspath(output)), exist_ok=True)
        write_library(output, text)
        click.echo(f"{output}: {len(added)} entr{'y' if len(added) == 1 else 'ies'} added"
                   + (f" ({', '.join(added)})" if added else "")
                   + (f"; already there: {', '.join(present)}" if present else ""))
    else:
        _emit(text)
    sys.exit(EXIT_BAD_INPUT if report["errors"] else 0)


@parts.command("check")
@click.argument("library", type=click.Path(dir_okay=False, path_type=str))
@_format_option(("json", "text"), "text")
@_reports_errors
def parts_check(library: str, fmt: str) -> None:
    """Validate a parts library and print it as a table.

    An unknown key, a value in the wrong unit or a max below its typ is an error naming
    the file, line, entry and key (exit status 2).

    \b
    Example:
      schemcheck parts check opamps.toml
    """
    from schemcheck.run.parts import check_library

    report = check_library(library)
    if fmt == "json":
        _emit(_json(report))
    else:
        from schemcheck.report.parts_text import check_text

        _emit(check_text(report))


_LOOPBACK = ("127.0.0.1", "localhost", "::1")


@main.command()
@click.option("--host", default="127.0.0.1", show_default=True,
              help="Address to listen on. Anything but loopback needs --token.")
@click.option("--port", type=click.IntRange(0, 65535), default=8765, show_default=True)
@click.option("--token", envvar="SCHEMCHECK_TOKEN", default=None,
              help="Bearer token clients must send (or set SCHEMCHECK_TOKEN).")
@click.option("--allow", "allow", multiple=True, type=click.Path(file_okay=False, path_type=str),
              help="A folder JSON 'path' submissions may name (repeatable).")
@click.option("--store", "store", type=click.Path(dir_okay=False, path_type=str), default=None,
              help="Results database (default: the CLI's cache in the user cache folder).")
@click.option("--parts", "parts", type=click.Path(dir_okay=False, path_type=str), default=None,
              help="Parts library for designs without a settings file naming one.")
@click.option("--samples", "samples", type=click.IntRange(0, 1_000_000), default=None,
              help="Monte Carlo samples per network (default 10000).")
@click.option("--timeout", "timeout", type=click.FloatRange(1, 3600), default=120.0,
              show_default=True, help="Time limit of one audit, seconds.")
@click.option("--max-upload", "max_upload", type=click.IntRange(1, 1024), default=32,
              show_default=True, help="Largest upload, MB (413 beyond).")
@click.option("--threads", type=click.IntRange(1, 64), default=8, show_default=True,
              help="Server threads.")
@click.option("--allow-host", "allow_hosts", multiple=True, metavar="NAME",
              help="Another Host name clients may use to reach the service (repeatable); "
                   "the bound address, localhost and the loopback addresses always work.")
@_reports_errors
def serve(host: str, port: int, token: str | None, allow: tuple[str, ...], store: str | None,
          parts: str | None, samples: int | None, timeout: float, max_upload: int,
          threads: int, allow_hosts: tuple[str, ...]) -> None:
    """Run the local HTTP service that editor scripts query (waitress).

    Requests naming another Host, coming from a page of another site, or uploading
    without the X-Schemcheck-Client header (or the token) are refused, before any body
    is read. SIGTERM or Ctrl-C stops the service and every process it started.

    \b
    Example:
      schemcheck serve --port 8765 --allow ~/designs --parts ~/designs/opamps.toml
    """
    if host not in _LOOPBACK and not token:
        click.echo(f"Error: refusing to listen on {host}: any address but loopback needs a "
                   "token (--token or SCHEMCHECK_TOKEN) that clients send as a bearer token",
                   err=True)
        sys.exit(EXIT_BAD_INPUT)
    from schemcheck_api import create_app
    from schemcheck_api.guard import allowed_hosts
    from schemcheck_api.server import serve as serve_app

    overrides: dict[str, Any] = {}
    if parts:
        from schemcheck.io.files import regular_file

        try:
            regular_file(parts, "parts library")
        except SchemcheckError as error:
            raise _OptionError("--parts", error) from None
        overrides["parts_library"] = os.path.abspath(parts)
    if samples is not None:
        overrides["mc_samples"] = samples
    app = create_app({"STORE_PATH": store, "TOKEN": token, "AUDIT_TIMEOUT": timeout,
                      "ALLOWED_FOLDERS": [os.path.abspath(a) for a in allow],
                      "MAX_CONTENT_LENGTH": max_upload * 1024 * 1024,
                      "AUDIT_OVERRIDES": overrides,
                      "ALLOWED_HOSTS": allowed_hosts(host, allow_hosts)})
    click.echo(f"schemcheck {__version__} serving on http://{host}:{port}/ "
               "(OpenAPI document at /openapi.json)", err=True)
    serve_app(app, host=host, port=port, threads=threads)


if __name__ == "__main__":  # pragma: no cover
    main()
