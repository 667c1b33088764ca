"""The command line: parse arguments, call the runner, print a summary, map outcomes to exit codes.

Exit status (the one place it is decided):
  0  the run succeeded
  1  the run succeeded but a ``--fail-on`` condition held (reserved; not yet offered)
  2  bad input or usage: a message naming the file, line or field and the fix; no traceback
  3  internal error (a bug): the traceback is saved to a file whose path is printed
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import traceback
from collections.abc import Sequence
from pathlib import Path

from reportgen import __version__
from reportgen.errors import ReportgenError

EXIT_OK = 0
EXIT_CONDITION = 1
EXIT_USAGE = 2
EXIT_INTERNAL = 3


class _Parser(argparse.ArgumentParser):
    """argparse that exits with reportgen's usage status (2) and a one-line hint."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        sys.stderr.write(f"reportgen: error: {message}\n  hint: reportgen {self.prog.split()[-1]} --help\n")
        raise SystemExit(EXIT_USAGE)


def _formats(text: str) -> tuple[str, ...]:
    from reportgen.runner import FORMATS

    chosen = tuple(part.strip() for part in text.split(",") if part.strip())
    unknown = [part for part in chosen if part not in (*FORMATS, "json")]
    if unknown or not chosen:
        raise argparse.ArgumentTypeError(
            f"unknown format {', '.join(unknown) or '(none)'}; choose from html, pdf, json (comma-separated)")
    return tuple(part for part in chosen if part != "json")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of ``reportgen``."""
    parser = _Parser(prog="reportgen", description="Order-of-integration and spurious-regression diagnostics "
                                                   "for time-series regressions, written as a dossier.")
    parser.add_argument("--version", action="version", version=f"reportgen {__version__}")
    commands = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)
    run = commands.add_parser("run", help="analyse a manifest and write the dossier")
    run.add_argument("manifest", type=Path, help="the manifest (YAML)")
    run.add_argument("--out", type=Path, required=True, help="folder for results.json and the dossier")
    run.add_argument("--format", type=_formats, default=("html", "pdf"), dest="formats",
                     help="comma-separated outputs besides results.json: html, pdf (default both); "
                          "'json' for results.json alone")
    run.add_argument("--templates", type=Path, action="append", default=[],
                     help="a folder of templates searched before the packaged ones (repeatable)")
    run.add_argument("--quiet", action="store_true", help="print nothing but errors")
    run.add_argument("--debug", action="store_true", help="show tracebacks of errors")
    return parser


def _summary(document: dict, out_dir: Path, files: Sequence[Path]) -> str:  # type: ignore[type-arg]
    lines = [f"reportgen {document['tool_version']}  run {document['run_id']}"]
    width = max((len(name) for name in document["regressions"]), default=10)
    for name, regression in document["regressions"].items():
        mark = "  needs attention" if regression["flagged"] else ""
        lines.append(f"  {name:<{width}}  {regression['verdict']}{mark}")
    counts = document["summary"]
    lines.append(f"{len(document['series'])} series, {len(document['regressions'])} regressions, "
                 f"{counts['flagged']} flagged")
    for path in files:
        lines.append(f"wrote {path}")
    return "\n".join(lines)


def _crash_report(error: BaseException) -> Path:
    handle, name = tempfile.mkstemp(prefix="reportgen-crash-", suffix=".txt")
    with os.fdopen(handle, "w", encoding="utf-8") as stream:
        stream.write(f"reportgen {__version__}\n")
        stream.write("".join(traceback.format_exception(error)))
    return Path(name)


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``reportgen`` console script; returns the exit status."""
    arguments = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser()
    try:
        options = parser.parse_args(arguments)
    except SystemExit as stop:
        return int(stop.code or 0)
    debug = getattr(options, "debug", False)
    try:
        from reportgen.runner import run

        def progress(message: str) -> None:
            if not options.quiet:
                print(f"  {message}", file=sys.stderr, flush=True)

        outcome = run(options.manifest, options.out, options.formats, template_dirs=options.templates,
                      command=["reportgen", *arguments], progress=progress)
    except ReportgenError as error:
        if debug:
            traceback.print_exc()
        print(error.render(), file=sys.stderr)
        return EXIT_USAGE
    except KeyboardInterrupt:
        print("reportgen: interrupted; no dossier was written or changed", file=sys.stderr)
        return 130
    except Exception as error:  # a bug: keep the traceback, but in a file
        if debug:
            traceback.print_exc()
        report = _crash_report(error)
        print(f"reportgen: internal error ({type(error).__name__}: {error}); this is a bug.\n"
              f"  the traceback is in {report}; no dossier was written or changed", file=sys.stderr)
        return EXIT_INTERNAL
    if not options.quiet:
        print(_summary(dict(outcome.document), outcome.out_dir, outcome.files))
    return EXIT_OK


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
