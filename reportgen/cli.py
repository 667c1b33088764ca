"""The command line: parse arguments, call the runner or the audit, print, map outcomes to exit codes.

Commands:
  reportgen run MANIFEST --out DIR [--format html,pdf|json] [--appendix] [--bundle] [--force] [--fail-on CONDITION]
                [--jobs N | --cluster ADDRESS] [--cache DIR | --no-cache] [--quiet]
                [--color auto|always|never] [--summary auto|full|short]
  reportgen verify DIR_OR_BUNDLE [--recompute] [--tolerance 1e-9]
  reportgen diff OLD NEW [--html FILE] [--tolerance 1e-6] [--exit-code]
  reportgen init DIR | check MANIFEST | schema | explain [CODE]

Exit status (the one place it is decided):
  0  success: the run wrote its dossier; verify found everything as recorded; diff ran (with or
     without differences, unless ``--exit-code``)
  1  a condition held: ``run --fail-on`` matched a regression (the dossier is still written);
     ``verify`` found an input, a dossier file, the run id or a recomputed value that does not
     match; ``diff --exit-code`` found differences (git's convention)
  2  bad input or usage: a message naming the file, line or field and the fix; no traceback
     unless ``--debug``; also a verify or diff target that is missing or not a dossier
  3  internal error (a bug): the traceback is saved to a file whose path is printed
"""

from __future__ import annotations

import argparse
import math
import os
import sys
import tempfile
import traceback
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

from reportgen import __version__
from reportgen.errors import ReportgenError
from reportgen.summary import COLOUR_CHOICES, DETAILS, FULL_LIMIT, colour_wanted, format_summary

EXIT_OK = 0
EXIT_CONDITION = 1
EXIT_USAGE = 2
EXIT_INTERNAL = 3


class _Parser(argparse.ArgumentParser):
    """argparse that exits with reportgen's usage status (2) and a one-line hint."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        command = self.prog.split()[-1]
        where = "reportgen" if command == "reportgen" else f"reportgen {command}"
        sys.stderr.write(f"reportgen: error: {message}\n  hint: {where} --help\n")
        raise SystemExit(EXIT_USAGE)


#: The conditions ``run --fail-on`` can test, and what each means.
FAIL_CONDITIONS: dict[str, str] = {
    "flagged": "the regression is flagged (spurious-risk, unbalanced or inconclusive)",
    "fragile": "the regression's verdict is fragile (an order or the cointegration tests depend on choices)",
    "inconclusive": "the regression's verdict is inconclusive",
}


def _formats(text: str) -> tuple[str, ...]:
    from reportgen.runner import FORMATS

    chosen = tuple(part.strip() for part in text.split(",") if part.strip())
    unknown = [part for part in chosen if part not in (*FORMATS, "json")]
    if unknown or not chosen:
        raise argparse.ArgumentTypeError(
            f"unknown format {', '.join(unknown) or '(none)'}; choose from html, pdf, tables, json (comma-separated)")
    return tuple(part for part in chosen if part != "json")


def _conditions(text: str) -> tuple[str, ...]:
    chosen = tuple(part.strip() for part in text.split(",") if part.strip())
    unknown = [part for part in chosen if part not in FAIL_CONDITIONS]
    if unknown or not chosen:
        raise argparse.ArgumentTypeError(
            f"unknown condition {', '.join(unknown) or '(none)'}; choose from {', '.join(FAIL_CONDITIONS)} "
            "(comma-separated or repeated)")
    return chosen


def _jobs(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        value = 0
    if value < 1:
        raise argparse.ArgumentTypeError(f"the number of jobs must be a whole number of at least 1; not {text!r}")
    return value


def _tolerance(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not math.isfinite(value) or value < 0:
        raise argparse.ArgumentTypeError(f"the tolerance must be a number of at least 0, such as 1e-9; not {text!r}")
    return value


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of ``reportgen``."""
    parser = _Parser(prog="reportgen", description="Order-of-integration and spurious-regression diagnostics "
                                                   "for time-series regressions, written as a dossier.")
    parser.add_argument("--version", action="version", version=f"reportgen {__version__}")
    commands = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)
    run = commands.add_parser("run", help="analyse a manifest and write the dossier")
    run.add_argument("manifest", type=Path, help="the manifest (YAML)")
    run.add_argument("--out", type=Path, required=True, help="folder for results.json and the dossier")
    run.add_argument("--format", type=_formats, default=("html", "pdf", "tables"), dest="formats",
                     help="comma-separated outputs besides results.json: html, pdf, tables (CSV and LaTeX files "
                          "under DIR/tables/; default all three); 'json' for results.json alone")
    run.add_argument("--templates", type=Path, action="append", default=[],
                     help="a folder of templates searched before the manifest's brand folder and the packaged "
                          "templates (repeatable; searched in the order given)")
    run.add_argument("--appendix", action="store_true",
                     help="lay the HTML and PDF out as a referee's appendix: compact tables only, no charts and no "
                          "folded details (results.json is the same as without it)")
    run.add_argument("--bundle", action="store_true",
                     help="also write DIR/bundle.zip: the manifest, a snapshot of every input, results.json, the "
                          "dossier, environment.lock and checksums.sha256")
    run.add_argument("--force", action="store_true",
                     help="replace a dossier in DIR that was written from a different manifest")
    run.add_argument("--fail-on", type=_conditions, action="append", default=[], dest="fail_on",
                     metavar="CONDITION",
                     help="exit with status 1 after writing the dossier when a regression is flagged, fragile or "
                          "inconclusive (comma-separated or repeated)")
    where = run.add_mutually_exclusive_group()
    where.add_argument("--jobs", type=_jobs, default=None, metavar="N",
                       help="worker processes for the statistics (default: one per core, for projects big enough "
                            "to gain from them); 1 computes everything in this process")
    where.add_argument("--cluster", metavar="ADDRESS",
                       help="run the statistics on the Dask cluster of this scheduler (e.g. tcp://host:8786); "
                            "needs reportgen[cluster]")
    caching = run.add_mutually_exclusive_group()
    caching.add_argument("--cache", type=Path, metavar="DIR",
                         help="reuse the results of earlier runs stored in DIR (default: $REPORTGEN_CACHE, else "
                              "$XDG_CACHE_HOME/reportgen, else ~/.cache/reportgen)")
    caching.add_argument("--no-cache", action="store_true", dest="no_cache",
                         help="compute everything again and store nothing")
    run.add_argument("--quiet", action="store_true", help="print nothing but errors")
    run.add_argument("--color", choices=COLOUR_CHOICES, default="auto", metavar="WHEN",
                     help="colour the closing summary: auto (on a terminal, unless NO_COLOR or CI is set; the "
                          "default), always or never")
    run.add_argument("--summary", choices=DETAILS, default="auto", dest="summary_detail", metavar="DETAIL",
                     help=f"the closing summary: full (a line per series and regression), short (counts by order "
                          f"and verdict, then the flagged regressions) or auto (full up to {FULL_LIMIT} series and "
                          f"{FULL_LIMIT} regressions; the default)")
    run.add_argument("--debug", action="store_true", help="show tracebacks of errors")

    verify = commands.add_parser("verify", help="check a dossier or bundle against its recorded inputs")
    verify.add_argument("target", type=Path, metavar="DIR_OR_BUNDLE",
                        help="a dossier folder written by 'reportgen run', or its bundle.zip")
    verify.add_argument("--recompute", action="store_true",
                        help="also run the analysis again (results.json only, in a temporary folder) and compare "
                             "every number")
    verify.add_argument("--tolerance", type=_tolerance, default=1e-9,
                        help="relative and absolute tolerance of --recompute (default 1e-9)")
    verify.add_argument("--debug", action="store_true", help="show tracebacks of errors")

    diff = commands.add_parser("diff", help="list what changed between two runs")
    diff.add_argument("old", type=Path, metavar="OLD", help="the earlier dossier folder or bundle")
    diff.add_argument("new", type=Path, metavar="NEW", help="the later dossier folder or bundle")
    diff.add_argument("--html", type=Path, metavar="FILE",
                      help="also write the changes as a standalone HTML page to FILE")
    diff.add_argument("--tolerance", type=_tolerance, default=1e-6,
                      help="relative and absolute tolerance for numbers (default 1e-6)")
    diff.add_argument("--exit-code", action="store_true", dest="exit_code",
                      help="exit with status 1 when there are differences (default: 0 either way)")
    diff.add_argument("--debug", action="store_true", help="show tracebacks of errors")

    init = commands.add_parser("init", help="create a project folder: a commented manifest, example data, a README")
    init.add_argument("folder", type=Path, metavar="DIR", help="a new or empty folder")
    init.add_argument("--debug", action="store_true", help="show tracebacks of errors")

    check = commands.add_parser("check", help="validate a manifest and its data without running the statistics")
    check.add_argument("manifest", type=Path, help="the manifest (YAML)")
    check.add_argument("--debug", action="store_true", help="show tracebacks of errors")

    commands.add_parser("schema", help="print the manifest's JSON Schema (for editors)")

    explain = commands.add_parser("explain", help="describe an error code (as printed in error[CODE]), or list them")
    explain.add_argument("code", nargs="?", metavar="CODE", help="an error code such as non-numeric; omit to list all")
    return parser


def failing_regressions(document: Mapping[str, Any], conditions: Sequence[str]) -> dict[str, list[str]]:
    """For each ``--fail-on`` condition, the regressions (in manifest order) that meet it."""
    tests = {
        "flagged": lambda regression: bool(regression.get("flagged")),
        "fragile": lambda regression: bool(regression.get("fragile")),
        "inconclusive": lambda regression: regression.get("verdict") == "inconclusive",
    }
    return {condition: [name for name, regression in document["regressions"].items() if tests[condition](regression)]
            for condition in dict.fromkeys(conditions)}


def _crash_report(error: BaseException) -> Path:
    handle, name = tempfile.mkstemp(prefix="reportgen-crash-", suffix=".txt")
    with os.fdopen(handle, "w", encoding="utf-8") as stream:
        stream.write(f"reportgen {__version__}\n")
        stream.write("".join(traceback.format_exception(error)))
    return Path(name)


#: Options of ``run`` that choose where and how the statistics are computed, never what they compute,
#: how the run reports, and ``--appendix``, which only lays the dossier out differently (the dossier
#: page records its layout). The value says whether the option takes a value.
EXECUTION_OPTIONS: dict[str, bool] = {"--jobs": True, "--cluster": True, "--cache": True, "--no-cache": False,
                                     "--color": True, "--summary": True, "--quiet": False, "--appendix": False}


def recorded_command(arguments: Sequence[str]) -> list[str]:
    """The command line results.json records: ``arguments`` without the :data:`EXECUTION_OPTIONS`.

    Runs that differ only in those options write the same results.json, byte for byte. Options
    may be abbreviated as argparse allows (``--job 2``, ``--no-c``) or joined to their value
    (``--jobs=2``).
    """
    names = _run_long_options()
    kept: list[str] = []
    skip = False
    for position, argument in enumerate(arguments):
        if skip:
            skip = False
            continue
        if argument == "--":
            kept.extend(arguments[position:])
            break
        option, joined, _ = argument.partition("=")
        matches = [name for name in names if name.startswith(option)] if option.startswith("--") else []
        full = option if option in names else (matches[0] if len(matches) == 1 else None)
        if full in EXECUTION_OPTIONS:
            skip = EXECUTION_OPTIONS[full] and not joined
            continue
        kept.append(argument)
    return kept


def _run_long_options() -> list[str]:
    """Every long option of ``run`` (argparse keeps them in its actions; there is no public accessor)."""
    subcommands = next(action for action in build_parser()._actions if isinstance(action, argparse._SubParsersAction))
    return [option for action in subcommands.choices["run"]._actions for option in action.option_strings
            if option.startswith("--")]


def _run_command(options: argparse.Namespace, arguments: Sequence[str]) -> int:
    from reportgen.cache import ResultCache, default_cache_dir
    from reportgen.progress import progress_display
    from reportgen.runner import run

    cache = None if options.no_cache else ResultCache(options.cache or default_cache_dir())
    outcome = run(options.manifest, options.out, options.formats, template_dirs=options.templates,
                  command=["reportgen", *recorded_command(arguments)],
                  progress=progress_display(sys.stderr, quiet=options.quiet), bundle=options.bundle,
                  force=options.force, jobs=options.jobs, cluster=options.cluster, cache=cache,
                  layout="appendix" if options.appendix else "full")
    if not options.quiet:
        print(format_summary(outcome.document, out_dir=outcome.out_dir, files=outcome.files,
                             colour=colour_wanted(options.color, sys.stdout), detail=options.summary_detail))
    conditions = [condition for group in options.fail_on for condition in group]
    failing = {condition: names for condition, names in failing_regressions(outcome.document, conditions).items()
               if names}
    if not failing:
        return EXIT_OK
    lines = ["reportgen: --fail-on: the dossier was written, but these regressions meet a condition:"]
    lines += [f"  {condition}: {', '.join(names)}" for condition, names in failing.items()]
    print("\n".join(lines), file=sys.stderr)
    return EXIT_CONDITION


def _verify_command(options: argparse.Namespace, arguments: Sequence[str]) -> int:
    from reportgen.audit import format_verification, verify

    verification = verify(options.target, recompute=options.recompute, tolerance=options.tolerance)
    print(format_verification(verification))
    return EXIT_OK if verification.ok else EXIT_CONDITION


def _write_page(path: Path, text: str) -> None:
    from reportgen.errors import Location, PageTargetError

    if path.is_dir():
        raise PageTargetError(location=Location(path), problem=f"{path} is a folder; --html needs a file name",
                              remedy="name the page, e.g. --html changes.html")
    if not path.parent.is_dir():
        raise PageTargetError(location=Location(path),
                              problem=f"cannot write {path}: the folder {path.parent} does not exist",
                              remedy="create the folder first or choose another path")
    handle, name = tempfile.mkstemp(prefix=f".{path.name}.", dir=path.parent)
    try:
        with os.fdopen(handle, "w", encoding="utf-8") as stream:
            stream.write(text)
        os.chmod(name, 0o666 & ~_umask())
        os.replace(name, path)
    except BaseException:
        Path(name).unlink(missing_ok=True)
        raise


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _diff_command(options: argparse.Namespace, arguments: Sequence[str]) -> int:
    from reportgen.audit import changes_html, diff_dossiers, format_changes

    changes = diff_dossiers(options.old, options.new, options.tolerance)
    if options.html is not None:
        _write_page(options.html, changes_html(changes))
    print(format_changes(changes))
    if options.html is not None:
        print(f"wrote {options.html}")
    return EXIT_CONDITION if options.exit_code and changes.rows else EXIT_OK


def _init_command(options: argparse.Namespace, arguments: Sequence[str]) -> int:
    from reportgen.scaffold import init_project

    for path in init_project(options.folder):
        print(f"wrote {path}")
    print(f"next: reportgen check {options.folder / 'manifest.yaml'}")
    return EXIT_OK


def _check_command(options: argparse.Namespace, arguments: Sequence[str]) -> int:
    from reportgen.preflight import check_manifest

    print(check_manifest(options.manifest).text())
    return EXIT_OK


def _schema_command(options: argparse.Namespace, arguments: Sequence[str]) -> int:
    import json

    from reportgen.preflight import manifest_schema

    print(json.dumps(manifest_schema(), indent=2, ensure_ascii=False))
    return EXIT_OK


def _explain_command(options: argparse.Namespace, arguments: Sequence[str]) -> int:
    from reportgen.errors import CATALOGUE, explain

    if options.code is None:
        width = max(len(code) for code in CATALOGUE)
        for code, entry in CATALOGUE.items():
            print(f"{code:<{width}}  {(entry.__doc__ or '').strip().splitlines()[0]}")
        return EXIT_OK
    if options.code not in CATALOGUE:
        import difflib

        close = difflib.get_close_matches(options.code, list(CATALOGUE), n=1)
        suggestion = f"did you mean '{close[0]}'? " if close else ""
        print(f"reportgen: error: no error code '{options.code}'\n  hint: {suggestion}'reportgen explain' lists them",
              file=sys.stderr)
        return EXIT_USAGE
    print(explain(options.code))
    return EXIT_OK


_COMMANDS = {"run": _run_command, "verify": _verify_command, "diff": _diff_command, "init": _init_command,
             "check": _check_command, "schema": _schema_command, "explain": _explain_command}


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``reportgen`` console script; returns the exit status."""
    arguments = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser()
    try:
        options = parser.parse_args(arguments)
    except SystemExit as stop:
        return int(stop.code or 0)
    debug = getattr(options, "debug", False)
    unchanged = "; no dossier was written or changed" if options.command == "run" else ""
    try:
        return _COMMANDS[options.command](options, arguments)
    except ReportgenError as error:
        if debug:
            traceback.print_exc()
        print(error.render(), file=sys.stderr)
        return EXIT_USAGE
    except BrokenPipeError:  # the reader of our output went away (``| head``): not an error of ours
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return EXIT_OK
    except KeyboardInterrupt:
        print(f"reportgen: interrupted{unchanged}", file=sys.stderr)
        return 130
    except Exception as error:  # a bug: keep the traceback, but in a file
        if debug:
            traceback.print_exc()
        report = _crash_report(error)
        print(f"reportgen: internal error ({type(error).__name__}: {error}); this is a bug.\n"
              f"  the traceback is in {report}{unchanged}", file=sys.stderr)
        return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
