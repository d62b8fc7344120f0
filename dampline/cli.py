"""Command line: ``python -m dampline <command>``.

Commands
--------
``record NOTEBOOK [--html OUT] [--output EXECUTED.ipynb | --inplace] [--timeout S]``
    Execute a notebook in a fresh kernel and write its design record: the executed
    notebook and, with ``--html``, one HTML page that shows it with no kernel and no
    network (see :mod:`dampline.record`).
``assets [--force]``
    Fetch the pinned npm scripts a record page inlines into the per-user cache (see
    :mod:`dampline.assets`).

Exit codes: 0 done; 1 the notebook failed (a cell raised or timed out, the kernel died);
2 bad input (unknown option, missing notebook); 3 the npm scripts are missing and could
not be fetched.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path
from typing import Sequence

__all__ = ["main", "build_parser"]

EXIT_OK, EXIT_FAILED, EXIT_USAGE, EXIT_ASSETS = 0, 1, 2, 3


def _positive_seconds(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"timeout {text!r} is not a number of seconds")
    if not value > 0:
        raise argparse.ArgumentTypeError(f"timeout must be > 0 s, got {text}")
    return value


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="python -m dampline",
        description="dampline batch commands.",
        epilog="Exit codes: 0 done, 1 the notebook failed, 2 bad input, 3 npm scripts missing.")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    rec = sub.add_parser(
        "record", help="execute a notebook and write its design record (notebook + HTML)",
        description="Execute NOTEBOOK in a fresh python3 kernel (working directory: its "
                    "folder) and write the executed notebook with a header (model hashes, "
                    "versions, date), and with --html a self-contained page that shows the "
                    "widgets with no kernel and no network.")
    rec.add_argument("notebook", type=Path, help="the notebook to run (.ipynb)")
    rec.add_argument("--html", type=Path, metavar="OUT", help="write the HTML page here")
    where = rec.add_mutually_exclusive_group()
    where.add_argument("--output", "-o", type=Path, metavar="EXECUTED.ipynb",
                       help="executed notebook (default: <name>.executed.ipynb beside it)")
    where.add_argument("--inplace", action="store_true",
                       help="overwrite NOTEBOOK with the executed notebook")
    rec.add_argument("--timeout", type=_positive_seconds, default=600.0, metavar="S",
                     help="seconds each cell may run (default 600)")
    rec.set_defaults(func=_cmd_record)

    assets = sub.add_parser("assets", help="fetch the pinned npm scripts record pages inline",
                            description="Download require.js and the ipywidgets HTML manager "
                                        "(exact pinned versions, integrity-checked) into the "
                                        "per-user cache.")
    assets.add_argument("--force", action="store_true", help="fetch again even if cached")
    assets.set_defaults(func=_cmd_assets)
    return parser


def _cmd_record(args: argparse.Namespace) -> int:
    from .assets import AssetError
    from .record import RecordError, record_notebook

    if not args.notebook.is_file():
        print(f"dampline record: notebook not found: {args.notebook}", file=sys.stderr)
        return EXIT_USAGE
    t0 = time.perf_counter()
    try:
        res = record_notebook(args.notebook, html=args.html, output=args.output,
                              timeout=args.timeout, inplace=args.inplace)
    except RecordError as exc:
        print(f"dampline record: {exc}", file=sys.stderr)
        return EXIT_FAILED
    except AssetError as exc:
        print(f"dampline record: {exc}", file=sys.stderr)
        return EXIT_ASSETS
    except (FileNotFoundError, ValueError) as exc:
        print(f"dampline record: {exc}", file=sys.stderr)
        return EXIT_USAGE
    for w in res.warnings:
        print(f"dampline record: warning: {w}", file=sys.stderr)
    print(f"executed notebook: {res.notebook}")
    if res.html is not None:
        size = res.html.stat().st_size
        print(f"HTML page: {res.html} ({size / 1e6:.1f} MB)")
    for m in res.header.get("models", []):
        print(f"model {', '.join(m['names'])}: sha256 {m['sha256']}")
    print(f"recorded in {time.perf_counter() - t0:.1f} s")
    return EXIT_OK


def _cmd_assets(args: argparse.Namespace) -> int:
    from .assets import main as assets_main

    return assets_main(["--force"] if args.force else [])


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code (argparse exits 2 on bad options)."""
    args = build_parser().parse_args(argv)
    return args.func(args)
