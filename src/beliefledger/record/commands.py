"""Command-line commands of the record layer: demo, seal, verify, pdf, diff, review, sign,
keygen.

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
    from .nbio import default_out
    from .sealer import seal

    pdf_target = None
    if args.pdf:  # refuse before the notebook runs: a missing browser writes nothing
        from .pdf import pdf_path_for, require_pdf_tools

        chromium = require_pdf_tools("seal --pdf")
        pdf_target = pdf_path_for(Path(args.out) if args.out else default_out(Path(args.notebook)))
        if pdf_target.exists() and not args.force:
            from ..errors import RecordError

            raise RecordError(f"{str(pdf_target)!r} already exists; pass --force to overwrite it")
    _err(f"sealing {Path(args.notebook).name}: executing in a clean kernel")
    res = seal(args.notebook, args.out, force=args.force, timeout=args.timeout,
               html=not args.no_html, progress=_err)
    print(f"sealed record: {res.notebook}")
    if res.html:
        print(f"offline HTML:  {res.html}")
    if pdf_target is not None:
        from .nbio import read_record
        from .pdf import write_pdf

        _err("printing the record to PDF with chromium")
        write_pdf(read_record(res.notebook)[0], pdf_target, chromium=chromium)
        print(f"PDF copy:      {pdf_target}")
    print(f"cases: {', '.join(res.cases)}")
    print(f"fingerprint:   {res.fingerprint}")
    print("Quote the fingerprint in the hand-over (e-mail, register); the reviewer checks it "
          f"with: beliefledger verify {res.notebook.name} --expect {res.fingerprint}")
    return EXIT_OK


def _cmd_verify(args: argparse.Namespace) -> int:
    from .verifier import verify

    res = verify(args.record, expect=args.expect, public_keys=args.public_key,
                 artefacts=args.artefacts, expect_chain=args.expect_chain)
    if args.json:
        print(json.dumps(res.to_dict(), indent=1, ensure_ascii=False))
    else:
        print(res.text())
    return EXIT_OK if res.ok else EXIT_FAILED


def _cmd_pdf(args: argparse.Namespace) -> int:
    from .pdf import pdf_from_sealed

    out = pdf_from_sealed(args.record, args.out, force=args.force)
    print(f"PDF copy of {Path(args.record).name}: {out}")
    return EXIT_OK


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
    from .nbio import read_record
    from .review import sign
    from .reviews import DECISION_WORDS
    from .signing import chain_head

    try:
        entry = sign(args.record, args.reviewer, args.comment or "", decision=args.decision,
                     comments=args.comments, checklist=args.checklist, key=args.key,
                     site=args.site)
    except RecordNotIntact as exc:
        _err(str(exc))
        return EXIT_FAILED
    kind = f"signed with key {entry['key_id']}" if "signature" in entry else (
        "unsigned (no --key): it covers the digests but proves no identity")
    _, meta = read_record(args.record)
    print(f"sign-off by {entry['reviewer']} added to {args.record}: "
          f"{DECISION_WORDS[entry['decision']]}, {len(entry['comments'])} comment(s); {kind}; "
          f"covers fingerprint {entry['fingerprint']} and the "
          f"{len(meta['signoffs']) - 1} sign-off(s) before it")
    print(f"sign-off chain head: {chain_head(meta['signoffs'])} (quote it with the "
          "fingerprint)")
    return EXIT_OK


def _cmd_review(args: argparse.Namespace) -> int:
    from .comments import comments_csv
    from .nbio import read_record, write_text
    from .review import review

    checks = review(args.record, site=args.site)
    if args.comments_out:
        _, meta = read_record(args.record)
        write_text(Path(args.comments_out), comments_csv(meta.get("signoffs") or []))
        _err(f"wrote the reviewers' comments to {args.comments_out}: fill its 'reply' column "
             "and put the replies on the case with bl.record.apply_replies(case, FILE)")
    if args.json:
        print(json.dumps(checks.to_dict(), indent=1, ensure_ascii=False))
    else:
        print(checks.text())
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
    s.add_argument("--pdf", action="store_true",
                   help="also print the record to NAME.sealed.pdf (needs chromium)")
    s.set_defaults(handler=_cmd_seal)

    pr = sub.add_parser("pdf", help="print a sealed record to PDF (fingerprint and page "
                                    "number on every page)",
                        description="Print the offline HTML copy of a sealed record to PDF "
                                    "with the system's chromium (no download, no network, "
                                    "no script). The record's digests are checked first: a "
                                    "record that is not intact is refused.")
    pr.add_argument("record", help="a sealed .ipynb")
    pr.add_argument("--out", help="PDF path (default NAME.sealed.pdf beside the record)")
    pr.add_argument("--force", action="store_true", help="overwrite an existing PDF")
    pr.set_defaults(handler=_cmd_pdf)

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
    v.add_argument("--expect-chain", metavar="HEAD",
                   help="the sign-off chain head quoted with it (beliefledger sign prints it)")
    v.add_argument("--public-key", action="append", metavar="PUBFILE",
                   help="a reviewer's public key; require a valid sign-off signed by it "
                        "(repeatable)")
    v.add_argument("--artefacts", metavar="DIR",
                   help="folder of the evidence files: check that each artefact the record "
                        "lists is there with its recorded size and SHA-256")
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

    r = sub.add_parser("review", help="the review checklist of a sealed record",
                       description="Print the checklist: automatic checks with their outcome "
                                   "and the items behind them, and the manual checks a "
                                   "reviewer ticks when signing. Reads the record as JSON; "
                                   "no notebook code runs.")
    r.add_argument("record", help="a sealed .ipynb")
    r.add_argument("--site", metavar="FILE", help="a site's own manual checks (JSON); also "
                   "read from $BELIEFLEDGER_SITE_CHECKS")
    r.add_argument("--json", action="store_true", help="machine-readable checklist")
    r.add_argument("--comments-out", metavar="FILE",
                   help="write the reviewers' comments as CSV with a 'reply' column for the "
                        "analyst")
    r.set_defaults(handler=_cmd_review)

    g = sub.add_parser("sign", help="add a reviewer's decision and sign-off, chained to the "
                                    "ones before it",
                       description="Add a sign-off covering the record's root digest and "
                                   "every sign-off before it, with the decision, the ticked "
                                   "checklist and comments anchored to what they concern. "
                                   "Refused on a record that is not intact.")
    g.add_argument("record", help="a sealed .ipynb (updated in place)")
    g.add_argument("--reviewer", required=True, help="the reviewer's name")
    g.add_argument("--decision", required=True, choices=["accept", "conditions", "reject"],
                   help="accept; accept with conditions (say which in the comments); reject")
    g.add_argument("--comments", metavar="FILE",
                   help="CSV or JSON with columns target, comment (targets such as "
                        "hypothesis:NAME, evidence:NAME, likelihood:ITEM|STATE|HYPOTHESIS, "
                        "scenario:NAME, cell:N, case)")
    g.add_argument("--checklist", metavar="FILE",
                   help="ticks of the manual checks: JSON {id: yes|no|n/a} or CSV id,ticked,note")
    g.add_argument("--comment", help="a general comment")
    g.add_argument("--site", metavar="FILE", help="the site's own manual checks (JSON)")
    g.add_argument("--key", metavar="KEYFILE", help="Ed25519 private key (beliefledger keygen)")
    g.set_defaults(handler=_cmd_sign)

    k = sub.add_parser("keygen", help="make an Ed25519 key pair for signing sign-offs")
    k.add_argument("prefix", help="writes PREFIX.key (private) and PREFIX.pub (public)")
    k.add_argument("--force", action="store_true", help="replace an existing key pair")
    k.set_defaults(handler=_cmd_keygen)


__all__ = ["add_parsers", "demo_notebook_path"]
