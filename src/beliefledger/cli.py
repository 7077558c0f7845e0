"""Command line: ``beliefledger demo | show | seal | verify | pdf | diff | sign | keygen``.

Exit codes: 0 success (for ``verify``: intact and reproducible), 1 a check
failed (``verify``: not intact), 2 unusable input (a file that cannot be
read, bad arguments).

Each command's parser and handler live in the module that does the work;
this file only wires them up, importing each lazily so that a quick
command (``verify``) never pays for a slow one's imports.
"""

from __future__ import annotations

import argparse
import importlib
import json
import sys
from collections.abc import Sequence

from ._version import __version__

EXIT_OK, EXIT_FAILED, EXIT_BAD_INPUT = 0, 1, 2

# module providing ``add_parsers(subparsers)``; each registers its commands
# with ``set_defaults(handler=...)``.
COMMAND_MODULES = ["beliefledger.cli", "beliefledger.record.commands"]


def _cmd_show(args: argparse.Namespace) -> int:
    """Print the ledger and review flags of one or more case files (the files are only
    read: nothing is written)."""
    from .casefile import load_case
    from .display import ledger_text, visible

    cases = [load_case(path) for path in args.cases]  # every file read before any output
    ledgers = []
    for path, case in zip(args.cases, cases, strict=True):
        if args.scenario:
            if args.scenario not in case.scenario_names:
                from .errors import CaseError

                raise CaseError(f"{path}: no scenario named {args.scenario!r}; its scenarios "
                                f"are {case.scenario_names}")
            case.use_scenario(args.scenario)
        ledgers.append((path, case.update()))
    if args.json:
        out = [dict(ledger.to_dict(), file=str(path)) for path, ledger in ledgers]
        print(json.dumps(out[0] if len(out) == 1 else out, indent=1, ensure_ascii=False,
                         allow_nan=False))
    else:
        for k, (path, ledger) in enumerate(ledgers):
            if len(ledgers) > 1:
                print(("\n" if k else "") + f"== {visible(str(path))}")
            print(ledger_text(ledger))
    failed = any(not ledger.ok for _, ledger in ledgers)
    return EXIT_FAILED if failed and args.strict else EXIT_OK


def _cmd_demo_engine(args: argparse.Namespace) -> int:
    """The demo without the record layer: the example case through the engine."""
    from .display import ledger_text
    from .examples import example_case

    case = example_case()
    print(ledger_text(case.update()))
    return EXIT_OK


def add_parsers(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("show", help="print the ledger and review flags of case files "
                                    "(reads them; changes nothing)")
    p.add_argument("cases", nargs="+", metavar="CASE.json", help="one or more case files")
    p.add_argument("--json", action="store_true",
                   help="machine-readable output (a list when several files are given)")
    p.add_argument("--scenario", help="prior scenario to use (default: each file's active one)")
    p.add_argument("--strict", action="store_true",
                   help="exit 1 when any ledger has a flag of severity error")
    p.set_defaults(handler=_cmd_show)
    if "demo" not in sub.choices:
        d = sub.add_parser("demo", help="run the built-in example case through the engine")
        d.add_argument("--out", help="(used once the record layer is installed)")
        d.set_defaults(handler=_cmd_demo_engine)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="beliefledger",
        description="Evidence updating and sealed audit records for incident analysis. "
                    "Decision support only: it does not replace the judgement of a "
                    "competent person, and local codes, regulations and licensed practice "
                    "prevail.")
    parser.add_argument("--version", action="version", version=f"beliefledger {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for modname in reversed(COMMAND_MODULES):  # record's commands first, ours fill gaps
        try:
            mod = sys.modules[__name__] if modname == __name__ else importlib.import_module(modname)
        except ModuleNotFoundError as exc:
            if exc.name and exc.name.startswith("beliefledger"):
                continue
            raise
        mod.add_parsers(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "handler", None):
        parser.print_help()
        return EXIT_BAD_INPUT
    from .errors import CaseError, CaseTypeError

    try:
        return int(args.handler(args) or 0)
    except (CaseError, CaseTypeError) as exc:
        from .display import visible  # a name quoted in the message may hold ESC or bidi codes

        print(f"beliefledger {args.command}: {visible(str(exc))}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
