"""Command-line commands of the record layer: demo, seal, verify, diff, sign, keygen.

Registered by :mod:`beliefledger.cli` through :func:`add_parsers`. Exit codes:
0 success (verify: intact and reproducible; diff: no differences), 1 a check
failed (verify: not intact or not reproducible; diff: differences found;
sign: the record is not intact), 2 unusable input.
"""

from __future__ import annotations

import argparse
import json
import shutil
import sys
from pathlib import Path

EXIT_OK, EXIT_FAILED, EXIT_BAD_INPUT = 0, 1, 2
DEMO_NOTEBOOK = "demo_investigation.ipynb"


def _err(msg: str) -> None:
    print(msg, file=sys.stderr, flush=True)


def _cmd_seal(args: argparse.Namespace) -> int:
    require_sealing_packages("seal")
    from .sealer import seal

    _err(f"sealing {Path(args.notebook).name}: executing in a clean kernel")
    res = seal(args.notebook, args.out, force=args.force, timeout=args.timeout,
               html=not args.no_html, progress=_err)
    print(f"sealed record: {res.notebook}")
    if res.html:
        print(f"offline HTML:  {res.html}")
    print(f"cases: {', '.join(res.cases)}")
    print(f"fingerprint:   {res.fingerprint}")
    print("Quote the fingerprint in the hand-over (e-mail, register); the reviewer checks it "
          f"with: beliefledger verify {res.notebook.name} --expect {res.fingerprint}")
    return EXIT_OK


def _cmd_verify(args: argparse.Namespace) -> int:
    from .verifier import verify

    res = verify(args.record, expect=args.expect, public_keys=args.public_key)
    if args.json:
        print(json.dumps(res.to_dict(), indent=1, ensure_ascii=False))
    else:
        print(res.text())
    return EXIT_OK if res.ok else EXIT_FAILED


def _cmd_diff(args: argparse.Namespace) -> int:
    from .differ import diff
    from .nbio import write_text

    d = diff(args.old, args.new)
    text = {"text": d.text, "markdown": d.markdown, "html": d.html}[args.format]()
    if args.out:
        write_text(Path(args.out), text)
        print(f"wrote {args.out}")
    else:
        print(text)
    return EXIT_OK if d.empty else EXIT_FAILED


def _cmd_sign(args: argparse.Namespace) -> int:
    from ..errors import RecordNotIntact
    from .review import sign

    try:
        entry = sign(args.record, args.reviewer, args.comment or "", key=args.key)
    except RecordNotIntact as exc:
        _err(str(exc))
        return EXIT_FAILED
    kind = f"signed with key {entry['key_id']}" if "signature" in entry else (
        "unsigned (no --key): it covers the digests but proves no identity")
    print(f"sign-off by {entry['reviewer']} added to {args.record}: {kind}; "
          f"covers fingerprint {entry['fingerprint']}")
    return EXIT_OK


def _cmd_keygen(args: argparse.Namespace) -> int:
    from .signing import keygen

    priv, pub, kid = keygen(args.prefix, force=args.force)
    print(f"private key: {priv} (keep it secret; mode 0600)")
    print(f"public key:  {pub} (give it to whoever checks your sign-offs)")
    print(f"key id:      {kid}")
    return EXIT_OK


def demo_notebook_path() -> Path:
    return Path(__file__).resolve().parent.parent / "data" / DEMO_NOTEBOOK


SEAL_NEEDS = ("nbformat", "nbclient", "ipykernel")
"""What sealing runs on (the notebook extra); checked before any work starts."""


def require_sealing_packages(command: str) -> None:
    """Refuse at once, before printing or writing anything, when a package sealing needs
    is missing, naming it and the install command."""
    import importlib.util

    from ..errors import RecordError

    missing = [m for m in SEAL_NEEDS if importlib.util.find_spec(m) is None]
    if missing:
        raise RecordError(f"{command} seals a notebook, which needs {', '.join(missing)}; "
                          "install them with pip install 'beliefledger[notebook]' (nothing "
                          "was written)")


def _cmd_demo(args: argparse.Namespace) -> int:
    require_sealing_packages("demo")
    from .sealer import seal
    from .verifier import verify

    out = Path(args.out or "demo_output")
    out.mkdir(parents=True, exist_ok=True)
    nb_path = out / DEMO_NOTEBOOK
    shutil.copyfile(demo_notebook_path(), nb_path)
    _err(f"demo: sealing {nb_path} (the bundled ammonia-odour investigation; all numbers "
         "invented)")
    # the demo folder is the demo's own: re-running it replaces its earlier outputs
    res = seal(nb_path, force=True, timeout=args.timeout, progress=_err)
    check = verify(res.notebook, expect=res.fingerprint)
    print(check.text())
    print()
    print(f"notebook (as written by the analyst): {nb_path}")
    print(f"sealed record (open in Jupyter):      {res.notebook}")
    print(f"offline HTML (open in any browser):   {res.html}")
    print(f"fingerprint to quote:                 {res.fingerprint}")
    print(f"re-check it yourself: beliefledger verify {res.notebook} --expect {res.fingerprint}")
    return EXIT_OK if check.ok else EXIT_FAILED


def add_parsers(sub: argparse._SubParsersAction) -> None:
    d = sub.add_parser("demo", help="seal the bundled example investigation and verify it")
    d.add_argument("--out", default="demo_output", help="folder for the outputs "
                   "(default demo_output; its earlier demo outputs are replaced)")
    d.add_argument("--timeout", type=int, default=600, help="seconds per cell (default 600)")
    d.set_defaults(handler=_cmd_demo)

    s = sub.add_parser(
        "seal", help="execute a notebook afresh and write a sealed record",
        description="Execute NOTEBOOK, and only that notebook, from top to bottom in a fresh "
                    "Python kernel: its code runs with your permissions, so seal only a "
                    "notebook you trust. Then write the sealed record and its offline HTML. "
                    "verify and diff never execute notebook code.")
    s.add_argument("notebook", help="the analyst's .ipynb")
    s.add_argument("--out", help="sealed notebook path (default NAME.sealed.ipynb beside it)")
    s.add_argument("--force", action="store_true", help="overwrite an existing record")
    s.add_argument("--timeout", type=int, default=600, help="seconds per cell (default 600)")
    s.add_argument("--no-html", action="store_true", help="skip the offline HTML copy")
    s.set_defaults(handler=_cmd_seal)

    v = sub.add_parser("verify", help="check a sealed record or its HTML copy (exit 0 intact "
                                      "and reproducible, 1 not, 2 unusable)",
                       description="Check a sealed record's digests and recompute its cases "
                                   "with the engine. Reads the notebook as plain JSON: no "
                                   "notebook code is executed. Given the HTML copy, checks "
                                   "the record the page carries the same way, and that the "
                                   "page is the page that record draws; nothing in the page is "
                                   "executed.")
    v.add_argument("record", help="a sealed .ipynb, or its .html copy")
    v.add_argument("--json", action="store_true", help="machine-readable report")
    v.add_argument("--expect", metavar="FINGERPRINT",
                   help="the fingerprint quoted in the hand-over")
    v.add_argument("--public-key", action="append", metavar="PUBFILE",
                   help="a reviewer's public key; require a valid sign-off signed by it "
                        "(repeatable)")
    v.set_defaults(handler=_cmd_verify)

    f = sub.add_parser("diff", help="what changed between two records or case files",
                       description="Compare the assumptions and results of two records or "
                                   "case files. Reads them as plain JSON: no notebook code is "
                                   "executed.")
    f.add_argument("old", help="earlier record (.ipynb) or case file (.json)")
    f.add_argument("new", help="later record or case file")
    f.add_argument("--format", choices=["text", "markdown", "html"], default="text")
    f.add_argument("--out", help="write the report to this file instead of the terminal")
    f.set_defaults(handler=_cmd_diff)

    g = sub.add_parser("sign", help="add a reviewer's sign-off covering the root digest")
    g.add_argument("record", help="a sealed .ipynb (updated in place)")
    g.add_argument("--reviewer", required=True, help="the reviewer's name")
    g.add_argument("--comment", help="the reviewer's comment")
    g.add_argument("--key", metavar="KEYFILE", help="Ed25519 private key (beliefledger keygen)")
    g.set_defaults(handler=_cmd_sign)

    k = sub.add_parser("keygen", help="make an Ed25519 key pair for signing sign-offs")
    k.add_argument("prefix", help="writes PREFIX.key (private) and PREFIX.pub (public)")
    k.add_argument("--force", action="store_true", help="replace an existing key pair")
    k.set_defaults(handler=_cmd_keygen)


__all__ = ["add_parsers", "demo_notebook_path"]
