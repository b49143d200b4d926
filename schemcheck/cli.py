"""The ``schemcheck`` command: a thin click layer over one library call per command."""

from __future__ import annotations

import functools
import os
import sys
from typing import Any, Callable

import click

from schemcheck import __version__
from schemcheck.errors import SchemcheckError

EXIT_FINDINGS = 1
EXIT_BAD_INPUT = 2

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


def _json(data: Any) -> str:
    """Indented for a person at a terminal; compact (and several times faster, via the C
    encoder) when piped to a program."""
    import json

    indent = 2 if sys.stdout.isatty() else None
    return json.dumps(data, indent=indent, ensure_ascii=False)


def _emit(text: str) -> None:
    click.echo(text, nl=not text.endswith("\n"))


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="schemcheck")
def main() -> None:
    """Audit the DC error budget of op-amp stages in KiCad schematics.

    \b
    Example:
      schemcheck netlist fixtures/demo/demo.kicad_sch --format text
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
        _emit(_json(result.to_dict()))
    else:
        from schemcheck.report.netlist_text import netlist_text

        _emit(netlist_text(result))
    for error in result.errors:
        click.echo(f"Error: {error}", err=True)
    if result.errors:
        sys.exit(EXIT_BAD_INPUT)


@main.command()
@click.argument("paths", nargs=-1, required=True, type=str)
@_format_option(("json", "text", "markdown", "sarif"), "json")
@click.option("--output", "-o", "output", type=click.Path(dir_okay=False, path_type=str),
              default=None, help="Write the report to FILE instead of standard output.")
@click.option("--temp", "temp", metavar="MIN:MAX", default=None,
              help="Operating temperature range in °C (default 0:70).")
@click.option("--parts", "parts", type=click.Path(dir_okay=False, path_type=str), default=None,
              help="Parts library (TOML) with op-amp parameters.")
@click.option("--budget", "budget", metavar="VOLTS", default=None,
              help="Default output error budget for stages without a DC_Budget field (e.g. 5mV).")
@click.option("--samples", "samples", type=click.IntRange(0, 1_000_000), default=None,
              help="Monte Carlo samples per network (default 10000; 0 turns it off).")
@click.option("--seed", "seed", type=int, default=None, help="Monte Carlo seed (default 1).")
@click.option("--mc-solve", "mc_solve", type=click.Choice(("update", "full")), default=None,
              help="How each Monte Carlo sample is solved: 'update' (default; the nominal "
                   "solution with low-rank resistor updates) or 'full' (a full solve per "
                   "sample; slower, the reference).")
@click.option("--settings", "settings_path", type=click.Path(dir_okay=False, path_type=str),
              default=None, help="Settings file to use instead of schemcheck.toml beside "
                                 "each design.")
@click.option("--jobs", "-j", "jobs", type=click.IntRange(1, 256), default=None,
              help="Worker processes (default: the machine's cores).")
@click.option("--fail-on", "fail_on", type=click.Choice(("info", "warning", "error")),
              default="error", show_default=True,
              help="Exit with status 1 when a finding of this severity or worse is found.")
@click.option("--no-cache", "no_cache", is_flag=True, help="Audit everything afresh.")
@click.option("--cache-file", "cache_file", type=click.Path(dir_okay=False, path_type=str),
              default=None, help="Results database (default: in the user cache folder).")
@_reports_errors
def audit(paths: tuple[str, ...], fmt: str, output: str | None, temp: str | None,
          parts: str | None, budget: str | None, samples: int | None, seed: int | None,
          mc_solve: str | None, settings_path: str | None, jobs: int | None, fail_on: str,
          no_cache: bool, cache_file: str | None) -> None:
    """Audit the DC output error of every op-amp stage of one or many designs.

    PATHS are schematics, exported netlists, project folders or folders of many
    projects (searched recursively; child sheets are audited through their root).
    Settings come from schemcheck.toml beside each design; options override it.

    Exit status: 0 no finding at or above --fail-on, 1 such findings, 2 unreadable
    input or bad usage.

    \b
    Example:
      schemcheck audit frontend.kicad_sch --temp -40:85 --parts opamps.toml --format text
      schemcheck audit designs/ --jobs 4 --format markdown --output checklist.md
    """
    from schemcheck.run.batch import Progress, audit_paths, exit_status
    from schemcheck.run.runner import options_to_overrides

    overrides = options_to_overrides(temp=temp, parts=parts, budget=budget, samples=samples,
                                     seed=seed, mc_solve=mc_solve)
    cache = None
    if not no_cache:
        from schemcheck.run.cache import ResultCache

        cache = ResultCache(cache_file)
    try:
        report = audit_paths(list(paths), overrides=overrides, settings_path=settings_path,
                             jobs=jobs, cache=cache, progress=Progress())
    finally:
        if cache is not None:
            cache.close()
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
    sys.exit(exit_status(report, fail_on))


def _render(report: dict[str, Any], fmt: str, output: str | None) -> str:
    if fmt == "json":
        from schemcheck_api.schemas import ReportSchema  # the service's definition of the shape

        return _json(ReportSchema().dump(report))
    if fmt == "text":
        from schemcheck.report.audit_text import audit_text

        return audit_text(report)
    if fmt == "markdown":
        from schemcheck.report.markdown import checklist

        return checklist(report)
    import json
    import os

    from schemcheck.report.sarif import sarif

    base = os.path.dirname(os.path.abspath(output)) if output else os.getcwd()
    return json.dumps(sarif(report, base), indent=2, ensure_ascii=False)


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
@_reports_errors
def serve(host: str, port: int, token: str | None, allow: tuple[str, ...], store: str | None,
          parts: str | None, samples: int | None, timeout: float, max_upload: int,
          threads: int) -> None:
    """Run the local HTTP service that editor scripts query (waitress).

    \b
    Example:
      schemcheck serve --port 8765 --allow ~/designs --parts ~/designs/opamps.toml
    """
    if host not in _LOOPBACK and not token:
        click.echo(f"Error: refusing to listen on {host}: any address but loopback needs a "
                   "token (--token or SCHEMCHECK_TOKEN) that clients send as a bearer token",
                   err=True)
        sys.exit(EXIT_BAD_INPUT)
    import waitress

    from schemcheck_api import create_app

    overrides: dict[str, Any] = {}
    if parts:
        overrides["parts_library"] = os.path.abspath(parts)
    if samples is not None:
        overrides["mc_samples"] = samples
    app = create_app({"STORE_PATH": store, "TOKEN": token, "AUDIT_TIMEOUT": timeout,
                      "ALLOWED_FOLDERS": [os.path.abspath(a) for a in allow],
                      "MAX_CONTENT_LENGTH": max_upload * 1024 * 1024,
                      "AUDIT_OVERRIDES": overrides})
    click.echo(f"schemcheck {__version__} serving on http://{host}:{port}/ "
               "(OpenAPI document at /openapi.json)", err=True)
    waitress.serve(app, host=host, port=port, threads=threads, ident="schemcheck")


if __name__ == "__main__":  # pragma: no cover
    main()
