"""Verify a sealed record without starting a kernel.

Reads the .ipynb as plain JSON (no nbformat, nbclient or altair), recomputes
every digest and the root, reports each cell or case that changed, was
added, removed or moved, re-derives the visible manifest, recomputes every
case's results from its embedded JSON with the installed engine and
compares them with the sealed results, checks sign-offs, and warns when the
installed versions differ from the sealed environment.

With a folder of artefacts (``--artefacts DIR``) it also checks that each
file an evidence item rests on is in the folder and still has the size and
SHA-256 digest recorded when it was attached (``artefact-missing``,
``artefact-changed``).

Tolerance of the reproduction check: every step probability must agree
within ``RESULT_TOL`` (absolute); the MAP and maximum-likelihood hypotheses,
the stop step and the set of flags (code, severity, where) must be equal.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .canonical import (
    MANIFEST_ROLE,
    cell_content,
    cell_digest,
    cell_role,
    digest,
    fingerprint,
    hashed_cells,
    normalize_fingerprint,
    notebook_frame,
    root_digest,
)
from .nbio import RecordError, read_record

RESULT_TOL = 1e-9
"""Absolute tolerance on each recomputed step probability."""


@dataclass(frozen=True)
class Problem:
    """One problem verify found: ``code`` (short kebab-case, like a flag's), ``where`` (the
    cell, case or part) and ``detail``."""

    code: str
    where: str
    detail: str

    def to_dict(self) -> dict[str, str]:
        return {"code": self.code, "where": self.where, "detail": self.detail}

    def __str__(self) -> str:
        return f"{self.where}: {self.detail} [{self.code}]"


INTEGRITY_CODES = frozenset({"cell-changed", "cell-added", "cell-removed", "cell-moved",
                             "case-changed", "case-added", "case-removed", "header-changed",
                             "root-mismatch", "manifest-cell", "case-not-as-shown",
                             "fingerprint-mismatch", "sign-off-broken", "sign-off-missing",
                             "review-cell", "key-not-trusted", "chain-head-mismatch",
                             "page-differs", "page-other-version", "embedded-shape"})
REPRODUCTION_CODES = frozenset({"results-differ", "case-unreadable"})
ARTEFACT_CODES = frozenset({"artefact-missing", "artefact-changed"})


@dataclass
class VerifyResult:
    """What verify found. ``ok`` is True when the record is intact and reproduces."""

    path: str
    sealed_root: str
    root: str
    fingerprint: str
    sealed_at: str
    cases: list[str]
    cells: int
    problems: list[Problem] = field(default_factory=list)
    warnings: list[Problem] = field(default_factory=list)
    signoffs: list[Any] = field(default_factory=list)
    chain_head: str | None = None
    """Short digest of the last sign-off: quote it with the fingerprint, since deleting the
    last sign-off leaves a valid, shorter chain."""
    artefacts_checked: int = 0
    artefacts_folder: str | None = None

    @property
    def intact(self) -> bool:
        return not any(p.code in INTEGRITY_CODES for p in self.problems)

    @property
    def reproducible(self) -> bool:
        return not any(p.code in REPRODUCTION_CODES for p in self.problems)

    @property
    def artefacts_match(self) -> bool:
        """True unless an artefact checked in the folder is missing or changed."""
        return not any(p.code in ARTEFACT_CODES for p in self.problems)

    @property
    def ok(self) -> bool:
        return not self.problems

    def to_dict(self) -> dict[str, Any]:
        return {"path": self.path, "ok": self.ok, "intact": self.intact,
                "reproducible": self.reproducible, "sealed_root": self.sealed_root,
                "root": self.root, "fingerprint": self.fingerprint,
                "sealed_at": self.sealed_at, "cases": list(self.cases), "cells": self.cells,
                "tolerance": RESULT_TOL,
                "problems": [p.to_dict() for p in self.problems],
                "warnings": [w.to_dict() for w in self.warnings],
                "signoffs": [s.to_dict() for s in self.signoffs],
                "chain_head": self.chain_head,
                "artefacts_match": self.artefacts_match,
                "artefacts_checked": self.artefacts_checked,
                "artefacts_folder": self.artefacts_folder}

    def text(self) -> str:
        head = ("INTACT and reproducible" if self.ok else
                "NOT INTACT" if not self.intact else
                "intact but NOT reproducible" if not self.reproducible else
                "intact and reproducible, but ARTEFACTS DIFFER")
        lines = [f"{Path(self.path).name}: {head}",
                 f"  sealed {self.sealed_at}; {len(self.cases)} case(s), {self.cells} cells",
                 f"  fingerprint {self.fingerprint}" + (
                     "" if self.root == self.sealed_root else
                     f" (recomputed; the record claims {fingerprint(self.sealed_root)})")]
        if self.artefacts_folder is not None:
            bad = sum(p.code in ARTEFACT_CODES for p in self.problems)
            lines.append(f"  artefacts: {self.artefacts_checked} checked in "
                         f"{self.artefacts_folder}, {self.artefacts_checked - bad} match")
        if self.problems:
            lines.append(f"Problems ({len(self.problems)}):")
            lines += [f"  - {p}" for p in self.problems]
        if self.warnings:
            lines.append(f"Warnings ({len(self.warnings)}):")
            lines += [f"  - {w}" for w in self.warnings]
        if self.signoffs:
            lines.append("Sign-offs:")
            lines += [f"  - {s}" for s in self.signoffs]
            lines.append(f"  chain head {self.chain_head} (quote it with the fingerprint: "
                         "removing the last sign-off leaves a shorter valid chain)")
        return "\n".join(lines)

    def __repr__(self) -> str:
        return (f"VerifyResult({Path(self.path).name!r}: ok={self.ok}, {len(self.problems)} "
                f"problems, {len(self.warnings)} warnings)")


def _cell_label(cells: list[dict[str, Any]], index: int) -> str:
    cell = cells[index]
    src = cell.get("source", "")
    src = src if isinstance(src, str) else "".join(src)
    first = next((ln.strip() for ln in src.splitlines() if ln.strip()), "")
    head = (first[:40] + "...") if len(first) > 40 else first
    return f"cell {index + 1} ({cell.get('cell_type')}{', ' + repr(head) if head else ''})"


def compare_cells(sealed: list[dict[str, Any]], cells: list[dict[str, Any]]) -> list[Problem]:
    """Changed, added, removed and moved cells between the manifest and the notebook."""
    current = hashed_cells(cells)
    cur_digests = [cell_digest(c) for _, c in current]
    old_digests = [e["sha256"] for e in sealed]
    problems: list[Problem] = []
    removed: list[tuple[int, str]] = []  # (position in sealed list, digest)
    added: list[tuple[int, str]] = []    # (position in current list, digest)
    pairs: list[tuple[int, int]] = []
    sm = difflib.SequenceMatcher(None, old_digests, cur_digests, autojunk=False)
    for tag, i1, i2, j1, j2 in sm.get_opcodes():
        if tag == "equal":
            continue
        old = list(range(i1, i2))
        new = list(range(j1, j2))
        if tag == "replace":
            for a, b in zip(old, new, strict=False):
                pairs.append((a, b))
            old, new = old[len(new):], new[len(old):]
        removed += [(a, old_digests[a]) for a in old]
        added += [(b, cur_digests[b]) for b in new]
    # a cell whose exact content appears elsewhere has moved, not changed
    moved_new: set[int] = set()
    moved_old: set[int] = set()
    pool = {}
    for b, d in added + [(b, cur_digests[b]) for _, b in pairs]:
        pool.setdefault(d, []).append(b)
    for a, d in removed + [(a, old_digests[a]) for a, _ in pairs]:
        if pool.get(d):
            b = pool[d].pop(0)
            moved_old.add(a)
            moved_new.add(b)
            idx = current[b][0]
            problems.append(Problem("cell-moved", _cell_label(cells, idx),
                                    f"was sealed as cell {sealed[a]['index'] + 1}; cells were "
                                    "reordered"))
    for a, b in pairs:
        if a in moved_old and b in moved_new:
            continue
        if a not in moved_old and b not in moved_new:
            idx = current[b][0]
            problems.append(Problem("cell-changed", _cell_label(cells, idx),
                                    f"content (source or outputs) differs from sealed cell "
                                    f"{sealed[a]['index'] + 1}"))
        elif a not in moved_old:
            removed.append((a, old_digests[a]))
        else:
            added.append((b, cur_digests[b]))
    for a, _ in removed:
        if a not in moved_old:
            e = sealed[a]
            problems.append(Problem("cell-removed", f"sealed cell {e['index'] + 1} "
                                    f"({e.get('cell_type')})", "is missing from the notebook"))
    for b, _ in added:
        if b not in moved_new:
            idx = current[b][0]
            problems.append(Problem("cell-added", _cell_label(cells, idx),
                                    "is not in the sealed manifest"))
    return problems


def _compare_results(title: str, scen: str, old: dict[str, Any], new: dict[str, Any]
                     ) -> list[Problem]:
    where = f"case {title!r}, scenario {scen!r}"
    out = []
    old_steps = [(s.get("step"), s.get("probabilities", {})) for s in old.get("steps", [])]
    new_steps = [(s["step"], s["probabilities"]) for s in new["steps"]]
    if [s for s, _ in old_steps] != [s for s, _ in new_steps]:
        out.append(Problem("results-differ", where,
                           f"steps {[s for s, _ in old_steps]} sealed, "
                           f"{[s for s, _ in new_steps]} recomputed"))
        return out
    worst, at = 0.0, None
    for (step, po), (_, pn) in zip(old_steps, new_steps, strict=True):
        if set(po) != set(pn):
            out.append(Problem("results-differ", where, f"step {step!r}: hypotheses differ"))
            return out
        for h, v in pn.items():
            try:
                d = abs(float(po[h]) - float(v))
            except (TypeError, ValueError):
                d = float("inf")
            if not d <= worst:
                worst, at = d, (step, h, po[h], v)
    if worst > RESULT_TOL:
        step, h, a, b = at
        out.append(Problem("results-differ", where,
                           f"P({h!r}) after step {step!r} was sealed as {a!r}, recomputes to "
                           f"{b:.12g} (difference {worst:.3g} > tolerance {RESULT_TOL:g})"))
    for key in ("map_hypothesis", "ml_hypothesis", "stopped_at"):
        if old.get(key) != new.get(key):
            out.append(Problem("results-differ", where,
                               f"{key} sealed {old.get(key)!r}, recomputed {new.get(key)!r}"))

    def fset(res):
        return sorted((f.get("code"), f.get("severity"), f.get("where"))
                      for f in res.get("flags", []) if isinstance(f, dict))

    fo, fn = fset(old), fset(new)
    if fo != fn:
        gone = [f"{c} ({w})" for c, _, w in fo if (c, _, w) not in fn]
        new_f = [f"{c} ({w})" for c, _, w in fn if (c, _, w) not in fo]
        out.append(Problem("results-differ", where,
                           "flags differ: " + "; ".join(
                               ([f"sealed only: {', '.join(gone)}"] if gone else [])
                               + ([f"recomputed only: {', '.join(new_f)}"] if new_f else []))))
    return out


def reproduce(entries: list[dict[str, Any]]) -> list[Problem]:
    """Recompute every case's results from its embedded JSON with the installed engine."""
    from ..casefile import from_envelope
    from ..engine import update_all
    from ..errors import CaseError

    problems = []
    for k, entry in enumerate(entries):
        title = entry.get("title", f"#{k + 1}") if isinstance(entry, dict) else f"#{k + 1}"
        try:
            case = from_envelope(entry.get("envelope"), origin=f"embedded case {title!r}")
        except (CaseError, AttributeError, ImportError) as exc:
            problems.append(Problem("case-unreadable", f"case {title!r}",
                                    f"the embedded case cannot be rebuilt: {exc}"))
            continue
        results = entry.get("results")
        if not isinstance(results, dict) or not results:
            problems.append(Problem("case-unreadable", f"case {title!r}",
                                    "the sealed results are missing"))
            continue
        try:
            recomputed = update_all(case)
        except CaseError as exc:
            problems.append(Problem("results-differ", f"case {title!r}", f"update failed: {exc}"))
            continue
        for scen, old in results.items():
            if scen != "base" and scen not in case.scenario_names:
                problems.append(Problem("results-differ", f"case {title!r}",
                                        f"sealed results name scenario {scen!r}, which the case "
                                        "does not have"))
                continue
            new = recomputed[scen].to_dict()
            if not isinstance(old, dict):
                problems.append(Problem("results-differ", f"case {title!r}, scenario {scen!r}",
                                        "sealed results are not an object"))
                continue
            problems += _compare_results(title, scen, old, new)
    return problems


def _case_artefacts(entries: list[dict[str, Any]]) -> list[tuple[str, str, Any]]:
    """(case title, evidence item, Artefact) for every artefact the embedded cases list,
    read from their JSON without rebuilding the cases (an entry that does not parse is
    skipped here: the digests and the reproduction check report it)."""
    from ..case.artefacts import artefact_from_dict
    from ..errors import CaseError

    out = []
    for k, entry in enumerate(entries):
        title = str(entry.get("title", f"#{k + 1}"))
        env = entry.get("envelope")
        body = env.get("case") if isinstance(env, dict) else None
        items = body.get("evidence") if isinstance(body, dict) else None
        for ev in items if isinstance(items, list) else []:
            if not isinstance(ev, dict) or not isinstance(ev.get("artefacts"), list):
                continue
            for i, raw in enumerate(ev["artefacts"]):
                try:
                    art = artefact_from_dict(raw, f"artefact #{i + 1}")
                except (CaseError, TypeError):
                    continue
                out.append((title, str(ev.get("name")), art))
    return out


def check_artefacts(entries: list[dict[str, Any]], folder: str | Path | None
                    ) -> tuple[list[Problem], list[Problem], int]:
    """Problems (a file missing from ``folder`` or changed since it was attached),
    warnings, and how many artefacts were checked. Without a folder nothing is read:
    a record that lists artefacts gets a warning saying how to check them."""
    from ..case.artefacts import check_files

    listed = _case_artefacts(entries)
    if folder is None:
        warn = [Problem("artefacts-unchecked", "artefacts",
                        f"the record lists {len(listed)} artefact(s); pass --artefacts FOLDER "
                        "to check the files against their digests")] if listed else []
        return [], warn, 0
    base = Path(folder)
    if not base.is_dir():
        raise RecordError(f"--artefacts: {str(base)!r} is not a folder; give the folder that "
                          "holds the evidence files")
    if not listed:
        return [], [Problem("no-artefacts", "artefacts",
                            f"the record lists no artefacts; nothing in {str(base)!r} was "
                            "checked")], 0
    problems = []
    checks = check_files([(item, art) for _, item, art in listed], base)
    for (title, item, art), chk in zip(listed, checks, strict=True):
        where = f"case {title!r}, evidence {item!r}, artefact {art.name!r}"
        if chk.status == "missing":
            problems.append(Problem("artefact-missing", where,
                                    f"no file of that name in {str(base)!r} (attached by "
                                    f"{art.who} at {art.when}, {art.size:,} bytes)"))
        elif chk.status == "changed":
            problems.append(Problem("artefact-changed", where,
                                    f"the file has {chk.size:,} bytes, SHA-256 "
                                    f"{chk.sha256[:16]}...; it was attached by {art.who} at "
                                    f"{art.when} with {art.size:,} bytes, SHA-256 "
                                    f"{art.sha256[:16]}..."))
    return problems, [], len(listed)


def _environment_warnings(sealed_env: Any) -> list[Problem]:
    from .sections import environment

    if not isinstance(sealed_env, dict):
        return [Problem("environment", "environment", "the sealed environment is missing")]
    now = environment()
    out = []
    if sealed_env.get("python") != now["python"]:
        out.append(Problem("environment", "Python", f"sealed with {sealed_env.get('python')}, "
                                                    f"installed {now['python']}"))
    old_pk = sealed_env.get("packages") or {}
    for name, ver in now["packages"].items():
        if name in old_pk and old_pk[name] != ver:
            out.append(Problem("environment", name,
                               f"sealed with {old_pk[name] or 'not installed'}, installed "
                               f"{ver or 'not installed'}"))
    return out


def verify_notebook(nb: dict[str, Any], meta: dict[str, Any], *, path: str = "record",
                    expect: str | None = None, public_keys: list[bytes] | None = None,
                    reproduce_results: bool = True,
                    artefacts: str | Path | None = None) -> VerifyResult:
    """Verify an already-read record (see :func:`verify`)."""
    from .canonical import ALGORITHM, CANONICAL_JSON, case_digest
    from .collect import collect_envelopes
    from .sections import manifest_cell
    from .signing import chain_head, check_chain, key_id

    man = meta["manifest"]
    header = meta["header"]
    cells = nb["cells"]
    problems: list[Problem] = []
    # cells
    problems += compare_cells(man["cells"], cells)
    # cases
    entries = meta["cases"]
    sealed_cases = man["cases"]
    case_digests = []
    for k, entry in enumerate(entries):
        title = entry.get("title") if isinstance(entry, dict) else None
        try:
            d = case_digest(entry)
        except (KeyError, TypeError, ValueError):
            d = None
        case_digests.append(d or "")
        if k >= len(sealed_cases):
            problems.append(Problem("case-added", f"case {title!r}", "is not in the manifest"))
        elif d != sealed_cases[k].get("sha256") or title != sealed_cases[k].get("title"):
            problems.append(Problem("case-changed", f"case {title!r}",
                                    "embedded case or its sealed results differ from the "
                                    "manifest digest"))
    for e in sealed_cases[len(entries):]:
        problems.append(Problem("case-removed", f"case {e.get('title')!r}",
                                "is in the manifest but not embedded"))
    # the embedded cases must be the ones the cells show
    try:
        shown = {e["title"]: (e["envelope"], e["cell"]) for e in collect_envelopes(cells)}
    except RecordError:
        shown = {}
    for entry in entries:
        if not isinstance(entry, dict):
            continue
        t = entry.get("title")
        if t not in shown:
            problems.append(Problem("case-not-as-shown", f"case {t!r}",
                                    "no cell output shows this case any more"))
        elif digest(shown[t][0]) != digest(entry.get("envelope")):
            problems.append(Problem("case-not-as-shown", f"case {t!r}",
                                    "the embedded case differs from the last display of it in "
                                    "the notebook"))
        elif shown[t][1] != entry.get("cell"):
            problems.append(Problem("case-not-as-shown", f"case {t!r}",
                                    f"the record says cell {entry.get('cell')!r} shows it last, "
                                    f"the notebook says cell {shown[t][1]}"))
    # root
    cur_cells = [cell_digest(c) for _, c in hashed_cells(cells)]
    try:
        root = root_digest(header, case_digests, cur_cells, notebook_frame(nb))
    except (TypeError, ValueError):
        root = "0" * 64
    sealed_root = man["root"]
    structural = [p for p in problems if p.code.startswith(("cell-", "case-"))]
    if root != sealed_root and not structural:
        problems.append(Problem("header-changed", "record header",
                                "the root digest in the manifest does not match the record: the "
                                "seal time, tool version, environment, notebook metadata or the "
                                "root itself was edited"))
    expected_cells = [{"index": i, "cell_type": c.get("cell_type"), "sha256": d}
                      for (i, c), d in zip(hashed_cells(cells), cur_cells, strict=True)]
    if not structural and man["cells"] != expected_cells:
        problems.append(Problem("manifest-cell", "manifest",
                                "the manifest's cell list (positions or types) does not match "
                                "the notebook"))
    if man.get("algorithm") != ALGORITHM or man.get("canonical_json") != CANONICAL_JSON:
        problems.append(Problem("manifest-cell", "manifest",
                                f"algorithm {man.get('algorithm')!r} / canonical form "
                                f"{man.get('canonical_json')!r} is not what this tool writes"))
    try:
        claimed_fp = fingerprint(sealed_root)
    except ValueError:
        claimed_fp = "?"
    if man.get("fingerprint") != claimed_fp:
        problems.append(Problem("root-mismatch", "manifest",
                                f"fingerprint {man.get('fingerprint')!r} does not belong to the "
                                "root digest"))
    # the visible manifest cell
    mcells = [i for i, c in enumerate(cells) if cell_role(c) == MANIFEST_ROLE]
    if len(mcells) != 1:
        problems.append(Problem("manifest-cell", "manifest",
                                f"expected one manifest cell, found {len(mcells)}"))
    elif cell_content(cells[mcells[0]]) != cell_content(manifest_cell(man)):
        problems.append(Problem("manifest-cell", _cell_label(cells, mcells[0]),
                                "the visible manifest differs from the record's metadata"))
    fp = fingerprint(root)
    if expect is not None:
        try:
            want = normalize_fingerprint(expect)
        except ValueError as exc:
            raise RecordError(f"--expect: {exc}") from None
        if not fp.startswith(want):
            problems.append(Problem("fingerprint-mismatch", "fingerprint",
                                    f"expected {want}, the record's content gives {fp}"))
    # sign-offs: each checked against the root and the one before it (the chain)
    signoffs = meta.get("signoffs", [])
    if not isinstance(signoffs, list):
        signoffs = [signoffs]
    statuses = check_chain(signoffs, root)
    for s in statuses:
        if s.status != "valid":
            kid = f", key {s.key_id}" if s.key_id else ""
            problems.append(Problem("sign-off-missing" if s.status == "missing-from-chain"
                                    else "sign-off-broken",
                                    f"sign-off {s.index + 1} ({s.reviewer}{kid})", s.detail))
    # the review cells show exactly the sign-offs (record version 3 on)
    if meta.get("record_version", 2) >= 3:
        problems += _check_review_cells(cells, meta)
    if public_keys:
        trusted = {key_id(k) for k in public_keys}
        if not any(s.status == "valid" and s.key_id in trusted for s in statuses):
            problems.append(Problem("key-not-trusted", "sign-offs",
                                    "no valid signature by the given public key(s) "
                                    f"{sorted(trusted)}"))
    if reproduce_results:
        problems += reproduce([e for e in entries if isinstance(e, dict)])
    warnings = _environment_warnings(header.get("environment"))
    art_problems, art_warnings, n_art = check_artefacts(
        [e for e in entries if isinstance(e, dict)], artefacts)
    problems += art_problems
    warnings += art_warnings
    return VerifyResult(path=path, sealed_root=sealed_root, root=root, fingerprint=fp,
                        sealed_at=str(header.get("sealed_at", "?")),
                        cases=[str(e.get("title")) for e in entries if isinstance(e, dict)],
                        cells=len(cells), problems=problems, warnings=warnings,
                        signoffs=statuses, chain_head=chain_head(signoffs),
                        artefacts_checked=n_art,
                        artefacts_folder=None if artefacts is None else str(artefacts))


def _check_review_cells(cells: list[dict[str, Any]], meta: dict[str, Any]) -> list[Problem]:
    from .canonical import REVIEW_ROLE
    from .reviews import FRONT_SECTION, REGISTER_SECTION, review_cells

    found = {}
    for i, c in enumerate(cells):
        if cell_role(c) == REVIEW_ROLE:
            sec = (c.get("metadata") or {}).get("beliefledger", {}).get("section")
            if sec in found:
                return [Problem("review-cell", _cell_label(cells, i),
                                f"a second review cell of section {sec!r}")]
            found[sec] = i
    want = dict(zip((FRONT_SECTION, REGISTER_SECTION), review_cells(meta), strict=True))
    problems = []
    for sec, cell in want.items():
        if sec not in found:
            problems.append(Problem("review-cell", f"review cell {sec!r}",
                                    "is missing from the record"))
        elif cell_content(cells[found[sec]]) != cell_content(cell):
            problems.append(Problem("review-cell", _cell_label(cells, found[sec]),
                                    "the reviews shown differ from the sign-offs in the "
                                    "record's metadata (a decision, comment or name was "
                                    "edited, or a sign-off removed)"))
    for sec in set(found) - set(want):
        problems.append(Problem("review-cell", _cell_label(cells, found[sec]),
                                f"unknown review section {sec!r}"))
    return problems


HTML_SUFFIXES = (".html", ".htm")
"""Names that :func:`verify` reads as an HTML copy of a record."""


def verify(path: str | Path, *, expect: str | None = None,
           public_keys: list[str | Path] | None = None,
           artefacts: str | Path | None = None,
           expect_chain: str | None = None) -> VerifyResult:
    """Verify a sealed record, or an HTML copy of one.

    Parameters
    ----------
    path : path
        The sealed notebook, or its HTML copy (``.html``/``.htm``): then the
        record the page carries is checked, and the page against it
        (:func:`beliefledger.record.htmlcheck.verify_html`).
    expect : str, optional
        The fingerprint quoted in the hand-over; a mismatch is a problem.
    public_keys : list of paths, optional
        Reviewers' Ed25519 public keys (PEM); at least one valid sign-off
        must be signed by one of them.
    artefacts : path, optional
        A folder holding the evidence files; each artefact the cases list must be
        there under its file name with the size and SHA-256 recorded at attach.
    expect_chain : str, optional
        The sign-off chain head quoted in the hand-over (``sign`` prints it): catches
        the removal of the last sign-off(s) together with the reviews shown.

    Raises
    ------
    RecordError
        The file is unusable: not a notebook, not a record, malformed manifest.
    """
    if Path(path).suffix.lower() in HTML_SUFFIXES:
        from .htmlcheck import verify_html

        res = verify_html(path, expect=expect, public_keys=public_keys, artefacts=artefacts)
    else:
        nb, meta = read_record(path)
        res = verify_loaded(nb, meta, path=str(path), expect=expect, public_keys=public_keys,
                            artefacts=artefacts)
    if expect_chain is not None:
        import dataclasses

        try:
            want = normalize_fingerprint(expect_chain)
        except ValueError as exc:
            raise RecordError(f"--expect-chain: {exc}") from None
        if not (res.chain_head or "").startswith(want):
            res = dataclasses.replace(res, problems=[*res.problems, Problem(
                "chain-head-mismatch", "sign-offs",
                f"expected the chain head {want}, the record's sign-offs give "
                f"{res.chain_head or 'none (no sign-off)'}: a sign-off was removed, replaced "
                "or added since the head was quoted")])
    return res


def verify_loaded(nb: dict[str, Any], meta: dict[str, Any], *, path: str,
                  expect: str | None = None, public_keys: list[str | Path] | None = None,
                  artefacts: str | Path | None = None) -> VerifyResult:
    """:func:`verify` on a record already read (from a notebook or an HTML copy): loads the
    public keys, and turns a malformed record into a :class:`RecordError`."""
    from .signing import load_public_key_raw

    keys = [load_public_key_raw(k) for k in (public_keys or [])]
    try:
        return verify_notebook(nb, meta, path=str(path), expect=expect, public_keys=keys,
                               artefacts=artefacts)
    except (KeyError, TypeError, AttributeError) as exc:
        raise RecordError(f"record {Path(path).name!r} is malformed ({type(exc).__name__}: "
                          f"{exc}); it cannot be verified") from None


__all__ = ["verify", "verify_notebook", "verify_loaded", "HTML_SUFFIXES", "VerifyResult",
           "Problem", "compare_cells", "reproduce", "check_artefacts", "RESULT_TOL",
           "ARTEFACT_CODES"]
