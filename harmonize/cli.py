"""The command line: each command gathers its options and calls the Python API.

Exit codes:
  0  finished (undecided cells are listed in the report, not treated as failure)
  1  some inputs could not be read; the others were converted
  2  wrong usage (unknown option, missing argument)
  3  nothing could be done: no readable input, a bad plan, a bad output folder
  4  drift: with --fail-on-drift, the saved plan no longer fits the data
"""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Any

import click
from rich.console import Console
from rich.table import Table as RichTable

from harmonize import __version__
from harmonize import plan as plans
from harmonize.options import Options
from harmonize.pipeline import RunError, RunResult, run
from harmonize.report import HTML_NAME, REPORT_NAME, UNRESOLVED_NAME
from harmonize.safety import run_cli
from harmonize.sources import SourceError

EXIT_PARTIAL, EXIT_FAILED, EXIT_DRIFT = 1, 3, 4


def _console(err: bool = False) -> Console:
    stream = sys.stderr if err else sys.stdout
    return Console(file=stream, highlight=False, soft_wrap=False,
                   no_color=not stream.isatty(), width=None if stream.isatty() else 160)


def _fail(message: str, code: int = EXIT_FAILED) -> None:
    click.echo(f"harmonize: {message}", err=True)
    sys.exit(code)


def input_options(func: Any) -> Any:
    """Options every command shares: hints the data itself may lack."""
    decorators = [
        click.argument("inputs", nargs=-1, required=True, type=click.Path(path_type=Path)),
        click.option("--region", metavar="CC", help="Country (ISO 3166 alpha-2) to assume "
                     "where the data names none: phone numbers, local conventions."),
        click.option("--date-order", type=click.Choice(["DMY", "MDY", "YMD"]),
                     help="Order for numeric dates the data cannot decide."),
        click.option("--locale", metavar="LOCALE", help="CLDR locale used as a prior, "
                     "e.g. de_DE."),
        click.option("--missing-word", "missing_words", multiple=True, metavar="WORD",
                     help="Another word meaning 'no value' (repeatable)."),
        click.option("--unit", "units", multiple=True, metavar="DIMENSION=UNIT",
                     help="Output unit for a dimension instead of SI, e.g. volume=L, "
                     "temperature=degF (repeatable)."),
        click.option("--year-window", type=click.IntRange(1, 100), default=80,
                     show_default=True, help="Two-digit years fall in the 100 years from "
                     "N-1 years ago to 100-N years ahead."),
        click.option("--country-codes", is_flag=True,
                     help="Write country columns as ISO 3166-1 alpha-2 codes."),
        click.option("--keep-formulas", is_flag=True,
                     help="Write text starting with = + - @ as it is; by default it gets a "
                     "leading quote so a spreadsheet does not run it as a formula."),
        click.option("--undecided-as", type=click.Choice(["empty", "raw", "best"]),
                     default="empty", show_default=True,
                     help="What an undecided cell holds in the output."),
        click.option("--jobs", type=int, default=1, show_default=True,
                     help="Processes for a folder of files (0 = all cores)."),
        click.option("--chunk-rows", type=click.IntRange(min=1000), metavar="N",
                     help="Read and convert delimited files N rows at a time, in bounded "
                     "memory (files over 256 MB do so anyway)."),
        click.option("--dask", "use_dask", is_flag=True,
                     help="Send delimited files through Dask's scheduler, in partitions "
                     "(needs the 'dask' extra)."),
    ]
    for decorator in reversed(decorators):
        func = decorator(func)
    return func


def _unit_targets(pairs: tuple[str, ...]) -> dict[str, str]:
    targets = {}
    for pair in pairs:
        dimension, sep, unit = pair.partition("=")
        if not sep or not dimension.strip() or not unit.strip():
            raise click.BadParameter(f"expected DIMENSION=UNIT, got {pair!r}",
                                     param_hint="--unit")
        targets[dimension.strip().lower()] = unit.strip()
    return targets


def _options(region: str | None, date_order: str | None, locale: str | None,
             missing_words: tuple[str, ...], units: tuple[str, ...], year_window: int,
             country_codes: bool, keep_formulas: bool, undecided_as: str) -> Options:
    try:
        return Options(default_region=region.upper() if region else None,
                       date_order=date_order, locale=locale, unresolved_fill=undecided_as,
                       missing_words=missing_words, unit_targets=_unit_targets(units),
                       year_window=year_window, neutralise_formulas=not keep_formulas,
                       engine={"text": {"country_codes": True}} if country_codes else {})
    except ValueError as exc:
        raise click.BadParameter(str(exc)) from None


RUN_KEYS = ("jobs", "chunk_rows", "use_dask")  # the shared options that steer the run


def _split_common(common: dict[str, Any]) -> tuple[Options, dict[str, Any]]:
    """The shared options as (Options for the engines, keywords for the run)."""
    steering = {key: common.pop(key) for key in RUN_KEYS}
    return _options(**common), steering


def _jobs(jobs: int) -> int:
    from harmonize.pipeline import cpu_count
    return cpu_count() if jobs <= 0 else jobs


def _execute(inputs: tuple[Path, ...], out: Path | None, options: Options, *,
             plan_file: Path | None = None, fmt: str | None = None, jobs: int = 1,
             quiet: bool = False, chunk_rows: int | None = None,
             use_dask: bool = False) -> RunResult:
    plan = None
    if plan_file is not None:
        try:
            plan = plans.load(plan_file)
        except plans.PlanError as exc:
            _fail(str(exc))
    try:
        with _progress(quiet) as (on_file, on_rows):
            result = run(inputs, out, plan=plan, options=options, fmt=fmt, jobs=_jobs(jobs),
                         on_file=on_file, plan_source=plan_file, chunk_rows=chunk_rows,
                         dask=use_dask, on_rows=on_rows)
    except (SourceError, RunError) as exc:
        _fail(str(exc))
    for error in result.errors:
        click.echo(f"harmonize: {error['message']}", err=True)
    if not quiet:
        for entry in result.report["files"]:
            where = entry["input"] + (f": sheet '{entry['sheet']}'" if entry["sheet"] else "")
            notes = list(entry.get("warnings", []))
            if entry["rows"] == 0:
                notes.append("no data rows (header only)")
            for note in notes:
                click.echo(f"harmonize: note: {where}: {note}", err=True)
    if result.errors and not result.report["files"]:
        sys.exit(EXIT_FAILED)
    return result


class _progress:
    """Progress bars on stderr, shown only on a terminal: files done, and rows done in a
    streamed file."""

    def __init__(self, quiet: bool) -> None:
        self.show = not quiet and sys.stderr.isatty()

    def __enter__(self) -> tuple[Any, Any]:
        if not self.show:
            return None, None
        from rich.progress import Progress
        self.bar = Progress(console=_console(err=True), transient=True)
        self.bar.start()
        files = self.bar.add_task("files", total=None)
        rows = self.bar.add_task("rows", total=None, visible=False)

        def on_file(outcome: Any) -> None:
            self.bar.update(files, advance=1, description=outcome.input)
            self.bar.update(rows, visible=False)

        def on_rows(name: str, done: int) -> None:
            self.bar.update(rows, completed=done, visible=True,
                            description=f"{name}: {done:,} rows")
        return on_file, on_rows

    def __exit__(self, *exc: object) -> None:
        if self.show:
            self.bar.stop()


def _column_table(report: dict[str, Any]) -> RichTable:
    table = RichTable(box=None, pad_edge=False, header_style="bold")
    for name in ("file", "column", "kind", "decision", "conf.", "conv.", "miss.", "undec.",
                 "passed"):
        table.add_column(name, justify="right" if name[-1] == "." or name == "passed"
                         else "left")
    for entry in report["files"]:
        where = entry["input"] + (f" [{entry['sheet']}]" if entry["sheet"] else "")
        for col in entry["columns"]:
            counts = col.get("counts", {})
            decision = " ".join(f"{k}={v}" for k, v in col["details"].items()
                                if isinstance(v, str | int | float) and k != "trim")
            table.add_row(where, col["name"], col["kind"], decision[:40],
                          f"{col['confidence']:.2f}", str(counts.get("converted", 0)),
                          str(counts.get("missing", 0)), str(counts.get("unresolved", 0)),
                          str(counts.get("passed", 0)))
            where = ""
    return table


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="harmonize")
def main() -> None:
    """Make exports from many regions consistent: ISO dates, plain numbers, SI units,
    E.164 phones and one spelling per value, with every undecided cell listed."""


@main.command(short_help="Show each column's kind, decision and confidence; write nothing.")
@input_options
@click.option("--json", "as_json", is_flag=True, help="Print the report as JSON.")
@click.option("--html", "html_file", type=click.Path(path_type=Path),
              help="Also write the HTML report to this file.")
def inspect(inputs: tuple[Path, ...], as_json: bool, html_file: Path | None,
            **common: Any) -> None:
    """Show what each column holds and what would be done, without writing data."""
    options, steering = _split_common(common)
    result = _execute(inputs, None, options, quiet=as_json, **steering)
    if as_json:
        click.echo(json.dumps(result.report, ensure_ascii=False, indent=1))
    else:
        _console().print(_column_table(result.report))
    if html_file is not None:
        from harmonize.html import render_html
        from harmonize.sources import atomic_write_text
        atomic_write_text(html_file, render_html(result.report))
    sys.exit(EXIT_PARTIAL if result.errors else 0)


@main.command(short_help="Save every column's decision as an editable plan file.")
@input_options
@click.option("--save", "plan_file", type=click.Path(path_type=Path),
              default=Path("harmonize-plan.toml"), show_default=True,
              help="Where to write the plan.")
def plan(inputs: tuple[Path, ...], plan_file: Path, **common: Any) -> None:
    """Decide every column and save the decisions as an editable plan file."""
    options, steering = _split_common(common)
    result = _execute(inputs, None, options, **steering)
    plans.save(result.plan, plan_file)
    click.echo(f"plan for {len(result.plan.tables)} table(s) written to {plan_file}")
    sys.exit(EXIT_PARTIAL if result.errors else 0)


@main.command(short_help="Write harmonised files and the reports into --out.")
@input_options
@click.option("--out", "out_dir", type=click.Path(path_type=Path), required=True,
              help="Folder for the harmonised files and the reports.")
@click.option("--format", "fmt", type=click.Choice(["csv", "xlsx", "parquet"]),
              help="Output format (default: the input's own).")
@click.option("--plan", "plan_file", type=click.Path(path_type=Path),
              help="Apply this saved plan instead of deciding afresh.")
@click.option("--fail-on-drift", is_flag=True,
              help="Exit with code 4 when the data no longer fits the plan.")
@click.option("--quiet", "-q", is_flag=True, help="Print nothing but errors.")
@click.option("--json", "as_json", is_flag=True, help="Print the summary as JSON.")
def apply(inputs: tuple[Path, ...], out_dir: Path, fmt: str | None, plan_file: Path | None,
          fail_on_drift: bool, quiet: bool, as_json: bool, **common: Any) -> None:
    """Harmonise the inputs into --out, with harmonize-report.json/.html and
    unresolved.csv beside the data."""
    options, steering = _split_common(common)
    result = _execute(inputs, out_dir, options, plan_file=plan_file, fmt=fmt,
                      quiet=quiet or as_json, **steering)
    summary = {**result.report["summary"], "errors": len(result.errors),
               "drift": result.drift, "out": str(out_dir)}
    if as_json:
        click.echo(json.dumps(summary))
    elif not quiet:
        console = _console()
        console.print(_column_table(result.report))
        console.print(f"\n{summary['cells']} cells: {summary['converted']} converted, "
                      f"{summary['missing']} missing, {summary['unresolved']} undecided, "
                      f"{summary['passed']} passed through.")
        console.print(f"Data and reports in {out_dir}/: {REPORT_NAME}, {HTML_NAME}, "
                      f"{UNRESOLVED_NAME}.")
        if result.drift:
            console.print("The data has drifted from the plan: see the report.")
    if fail_on_drift and result.drift:
        sys.exit(EXIT_DRIFT)
    sys.exit(EXIT_PARTIAL if result.errors else 0)


@main.command(short_help="List undecided cells and what would decide them.")
@input_options
@click.option("--plan", "plan_file", type=click.Path(path_type=Path),
              help="Judge the cells under this saved plan.")
@click.option("--csv", "as_csv", is_flag=True, help="Print every undecided cell as CSV.")
def ambiguous(inputs: tuple[Path, ...], plan_file: Path | None, as_csv: bool,
              **common: Any) -> None:
    """List the cells that remain undecided, per file and column, and what would
    decide them."""
    options, steering = _split_common(common)
    result = _execute(inputs, None, options, plan_file=plan_file, quiet=as_csv, **steering)
    cells = result.report["unresolved"]
    if as_csv:
        from harmonize.report import unresolved_csv
        click.echo(unresolved_csv(cells), nl=False)
        sys.exit(EXIT_PARTIAL if result.errors else 0)
    groups: dict[tuple[str, str | None, str, str], list[int]] = {}
    for cell in cells:
        groups.setdefault((cell["file"], cell["sheet"], cell["column"], cell["reason"]),
                          []).append(cell["row"])
    table = RichTable(box=None, pad_edge=False, header_style="bold")
    for name in ("file", "column", "cells", "rows", "why / what would decide it"):
        table.add_column(name, overflow="fold")
    for (file, sheet, column, reason), rows in groups.items():
        shown = ", ".join(str(r) for r in rows[:8]) + (" ..." if len(rows) > 8 else "")
        table.add_row(file + (f" [{sheet}]" if sheet else ""), column, str(len(rows)),
                      shown, reason)
    console = _console()
    if not cells:
        console.print("No undecided cells.")
    else:
        console.print(table)
        console.print(f"\n{len(cells)} undecided cells in {len(groups)} group(s).")
    sys.exit(EXIT_PARTIAL if result.errors else 0)


def entry() -> None:
    """The console script: an unexpected error becomes one line and exit code 3."""
    run_cli(main)


if __name__ == "__main__":
    entry()
