"""Run in a fresh interpreter by test_no_code_from_data: load, verify and diff
files that hold code, and take the case through a workbook and back, with a
Python audit hook watching for code execution.

Usage: python nocode_probe.py CASE_FILE RECORD OTHER_RECORD MARKER
Prints one JSON object: the audit events that would mean data ran as code.
"""

from __future__ import annotations

import json
import sys


def main() -> int:
    case_file, record, other, marker = sys.argv[1:5]
    import tempfile
    from pathlib import Path

    import openpyxl  # noqa: F401  (imported before the hook: its own modules are code)

    import beliefledger as bl
    from beliefledger import casefile, display  # noqa: F401
    from beliefledger.record import diff, differ, html, verifier, verify  # noqa: F401

    seen: list[str] = []
    watch_always = {"subprocess.Popen", "os.system", "os.exec", "os.posix_spawn", "os.spawn",
                    "os.fork", "os.forkpty", "pickle.find_class", "pty.spawn"}
    # (marshal.loads and exec also fire for every module import; code is caught
    # through "compile" and "exec" of code that carries the marker instead)

    def hook(event: str, args: tuple) -> None:
        if event in watch_always:
            seen.append(event)
        elif event == "compile":
            src = args[0]
            text = src.decode("utf-8", "replace") if isinstance(src, bytes) else str(src)
            if marker in text or "__import__('os')" in text:
                seen.append(f"compile of data: {text[:80]!r}")
        elif event == "exec":
            code = args[0]
            consts = " ".join(map(str, getattr(code, "co_consts", ())))
            if marker in consts:
                seen.append("exec of data")

    sys.addaudithook(hook)
    case = bl.load_case(case_file)
    case.update()
    display.ledger_text(case.update())
    display.case_html(case)
    result = verify(record)
    text = result.text()
    d = diff(record, other)
    d.text()
    diff(case_file, case_file).text()
    html.render_html(json.loads(open(record, encoding="utf-8").read()))
    book = case.to_excel(Path(tempfile.mkdtemp()) / "case.xlsx")
    assert bl.Case.from_excel(book).notes == case.notes  # code-like text stays text
    print(json.dumps({"events": seen, "verify_ok": result.ok, "verify_text": text[:200]}))
    return 0


if __name__ == "__main__":
    sys.exit(main())
