"""The `permq` command: `permq run FILE`, `permq shell`, `permq schema`, and `permq` alone.

Exit status of `permq run`: 0 when every statement ran, 1 when a statement failed (its error
is printed in its place; the others still run), 2 for a usage error (unknown option, no such
query file).
"""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

from ..pipeline import Session
from ..render import render
from ..result import Failure
from ..syntax.parser import parse_script
from .progress import ProgressLine

FORMATS = ("text", "json", "csv", "markdown", "sentences")
EXIT_CODES = ("exit status: 0 when every statement ran, 1 when a statement failed (its error "
              "is printed in its place; the others still run), 2 for a usage error")


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="permq", description="Exact permutation and rank tests "
                                "beside their normal-theory counterparts.", epilog=EXIT_CODES)
    sub = p.add_subparsers(dest="command")
    r = sub.add_parser("run", help="run a query file ('-' for standard input)",
                       epilog=EXIT_CODES)
    r.add_argument("file")
    r.add_argument("--format", choices=FORMATS, default="text",
                   help="text (default), json, csv, markdown, or one sentence per result")
    r.add_argument("--report", metavar="FILE.html", default=None,
                   help="also write a self-contained HTML report of the run")
    r.add_argument("--color", choices=("auto", "always", "never"), default="auto")
    r.add_argument("--cluster", metavar="ADDRESS", default=None,
                   help="run several-response statements on this Dask scheduler "
                        "(e.g. tcp://127.0.0.1:8786); the numbers are the same as here")
    r.add_argument("--workers", type=int, default=None,
                   help="local workers for several-response statements (default: every core)")
    s = sub.add_parser("shell", help="the interactive shell")
    s.add_argument("files", nargs="*", help="tables (.csv, ...) to load or query files to run")
    sub.add_parser("schema", help="print the JSON Schema of --format json output")
    return p


def main(argv=None) -> int:
    args = build_parser().parse_args(argv)
    if args.command == "run":
        return run_file(args.file, args.format, args.color, args.cluster, args.workers,
                        args.report)
    if args.command == "schema":
        from ..contract import schema_text

        sys.stdout.write(schema_text())
        return 0
    files = getattr(args, "files", [])
    if not sys.stdin.isatty():
        return run_file("-", "text", "never")
    from .shell import start_shell

    return start_shell(files)


def run_file(path: str, fmt: str = "text", color: str = "auto", cluster=None,
             workers=None, report=None) -> int:
    if path == "-":
        source, base = sys.stdin.read(), Path.cwd()
    else:
        p = Path(path)
        try:
            source = p.read_text(encoding="utf-8")
        except FileNotFoundError:
            print(f"permq: no query file '{path}'", file=sys.stderr)
            return 2
        except (OSError, UnicodeDecodeError) as exc:
            print(f"permq: cannot read '{path}': {exc}", file=sys.stderr)
            return 2
        base = p.resolve().parent
    progress = ProgressLine() if sys.stderr.isatty() else None
    session = Session(base_dir=base, on_progress=progress, cluster=cluster, workers=workers)
    use_color = color == "always" or (color == "auto" and sys.stdout.isatty())
    outputs, failed = [], False
    for st in parse_script(source):
        if progress:
            progress.start()
        out = session.run_statement(st)
        if progress:
            progress.clear()
        if out is None:
            if session.quit_requested:
                break
            continue
        failed |= isinstance(out, Failure)
        if fmt == "text":
            sys.stdout.write(render([out], "text", color=use_color) + "\n")
            sys.stdout.flush()
        else:
            outputs.append(out)
        if isinstance(out, Failure) and out.kind == "cancelled":
            break
    if fmt != "text":
        sys.stdout.write(render(outputs, fmt))
    if report:
        failed |= not _write_report(session, report)
    return 1 if failed else 0


def _write_report(session, target: str) -> bool:
    from ..errors import PermqError
    from ..report import write

    try:
        print(f"permq: {write(session, Path(target))}", file=sys.stderr)
        return True
    except PermqError as exc:
        print(f"permq: {exc.message}", file=sys.stderr)
        return False


if __name__ == "__main__":
    sys.exit(main())
