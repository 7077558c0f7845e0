"""The workbench in a real browser: JupyterLab 4 and Jupyter Notebook 7 in Debian's
chromium, offline.

The harness (``harness.py`` beside this file) runs inside a network
namespace with loopback only, so the test proves the workbench needs no
internet: any request to another host fails and is listed. The displayed
posterior and MAP are compared with the engine's, computed here for the
same edits. Each front end runs the same steps: open the template, run all,
change the prior scenario, change an observed state, read the posterior,
add a cell and save through the page; the saved file is then sealed and
verified.

To enable on a workstation: install Debian's chromium (``apt-get install -y
chromium``; never a browser download) and run as root, or with rights to
create a network namespace (``unshare -n``). Under ``CI=true`` the test
never skips.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

import beliefledger as bl
from beliefledger.widgets._base import fmt_p

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[1]
ARTIFACTS = ROOT / "tests" / "artifacts"
sys.path.insert(0, str(HERE))
import harness  # noqa: E402

pytestmark = pytest.mark.browser

ENABLE_HINT = ("install Debian's chromium (apt-get install -y chromium) and run as root or with "
               "the right to create a network namespace (unshare -n); CI=true makes this a failure "
               "instead of a skip")


def netns_problem() -> str | None:
    """Why the offline browser test cannot run here (None when it can)."""
    if not os.path.exists(harness.CHROMIUM):
        return f"chromium not found at {harness.CHROMIUM}"
    for tool in ("unshare", "ip"):
        if shutil.which(tool) is None:
            return f"'{tool}' is not installed (util-linux / iproute2)"
    probe = subprocess.run(["unshare", "-n", "sh", "-c", "ip link set lo up"],
                           capture_output=True, text=True)
    if probe.returncode != 0:
        return f"cannot create a network namespace: {probe.stderr.strip() or probe.returncode}"
    return None


def run_offline(out: Path, screenshot: Path | None = None, repaints: int = 5,
                timeout: float = 200, case: str = "template", saved: Path | None = None,
                front: str = "lab") -> dict:
    """Run the harness under ``unshare -n`` (loopback only) and return its JSON."""
    cmd = ["unshare", "-n", "sh", "-c", 'ip link set lo up && exec "$0" "$@"',
           sys.executable, str(HERE / "harness.py"), "--out", str(out),
           "--repaints", str(repaints), "--case", case, "--front", front]
    if screenshot is not None:
        cmd += ["--screenshot", str(screenshot)]
    if saved is not None:
        cmd += ["--saved", str(saved)]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout)
    if not out.exists():
        raise AssertionError(f"browser harness wrote no result (exit {proc.returncode}):\n"
                             f"{proc.stdout[-2000:]}\n{proc.stderr[-3000:]}")
    return json.loads(out.read_text())


def require_offline_browser(problem: str | None) -> None:
    """Skip (or, under CI=true, fail) with a how-to-enable message when ``problem``."""
    if problem:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(f"browser test cannot run under CI=true: {problem}")
        pytest.skip(f"browser test skipped: {problem}; to enable, {ENABLE_HINT}")


def _front_run(front: str, tmp_path_factory, *, shot_name: str, result_name: str,
               repaints: int) -> dict:
    require_offline_browser(netns_problem())
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    shot = ARTIFACTS / shot_name
    shot.unlink(missing_ok=True)
    work = tmp_path_factory.mktemp(f"browser-{front}")
    saved = work / "saved" / "workbench.ipynb"
    saved.parent.mkdir()
    result = run_offline(work / "result.json", shot, saved=saved, repaints=repaints, front=front)
    result["saved_path"] = str(saved)
    # the whole result, for diagnosing a failure after the fact
    (ARTIFACTS / result_name).write_text(json.dumps(result, indent=1))
    result["screenshot"] = shot
    return result


@pytest.fixture(scope="module")
def browser_run(tmp_path_factory):
    """JupyterLab 4 (its repaint timings are kept for the README's figures)."""
    result = _front_run("lab", tmp_path_factory, shot_name="workbench_browser.png",
                        result_name="browser_result.json", repaints=5)
    (ARTIFACTS / "browser_timings.json").write_text(json.dumps(
        {"repaint_ms": result.get("repaint_ms"), "steps": result.get("steps"),
         "seconds": result.get("seconds")}, indent=1))
    return result


@pytest.fixture(scope="module")
def notebook7_run(tmp_path_factory):
    """Jupyter Notebook 7 (the ``notebook`` package), the same steps."""
    return _front_run("notebook", tmp_path_factory, shot_name="workbench_notebook7.png",
                      result_name="notebook7_result.json", repaints=2)


@pytest.fixture(params=["lab", "notebook"], ids=["jupyterlab4", "notebook7"])
def front_run(request):
    return request.getfixturevalue("browser_run" if request.param == "lab" else "notebook7_run")


def _expected(scenario: str, observe: tuple[str, str] | None = None):
    case = bl.example_case()
    case.use_scenario(scenario)
    if observe:
        case.observe(*observe)
    return case.update()


def _assert_shows(shown: dict, ledger) -> None:
    assert shown is not None, "the page showed no posterior"
    assert shown["map"] == ledger.map_hypothesis, shown["text"]
    assert shown["map_p"] == f"P = {fmt_p(float(ledger.posterior[ledger.map_hypothesis]))}"
    assert shown["posterior"] == {h: fmt_p(float(p)) for h, p in ledger.posterior.items()}


def test_workbench_runs_offline_and_follows_the_engine(front_run):
    r = front_run
    assert r["ok"], f"{r.get('error')}\n{r.get('traceback', '')}\n{r.get('server_log_tail', '')}"
    assert r["network_isolated"], "the harness ran with a network beyond loopback"
    assert r["external_requests"] == [], "the page tried to reach the internet"
    assert r["chart_svgs"] == 3
    base = _expected("base")
    _assert_shows(r["initial"], base)
    uniform = _expected(harness.SCENARIO)
    assert uniform.posterior[uniform.map_hypothesis] != base.posterior[base.map_hypothesis]
    _assert_shows(r["after_scenario"], uniform)
    flipped = _expected(harness.SCENARIO, (harness.EVIDENCE, harness.STATE))
    assert flipped.map_hypothesis != uniform.map_hypothesis  # the edit changes the MAP
    _assert_shows(r["after_observation"], flipped)
    assert f"'{harness.EVIDENCE}' observed as '{harness.STATE}'" in r["status"]
    assert r["screenshot"].stat().st_size > 10_000
    want = 5 if r["front"] == "lab" else 2
    assert len(r["repaint_ms"]) == want and all(t > 0 for t in r["repaint_ms"])


def test_a_notebook_the_front_end_saved_seals_and_verifies(front_run):
    """The hand-over step on a file the front end wrote, after the user ran and edited it."""
    from beliefledger.record.sealer import seal
    from beliefledger.record.verifier import verify

    r = front_run
    assert r["ok"] and r.get("saved"), r.get("error")
    saved = Path(r["saved_path"])
    raw = json.loads(saved.read_text(encoding="utf-8"))
    assert any(isinstance(c["source"], list) for c in raw["cells"])  # as Jupyter stores it
    typed = ["".join(c["source"]) for c in raw["cells"]]
    assert harness.ADDED_CELL in typed, "the cell typed in the browser is not in the file"
    res = seal(saved, timeout=300)
    v = verify(res.notebook, expect=res.fingerprint)
    assert v.ok, v.text()
    assert v.text().splitlines()[0].endswith("INTACT and reproducible")
    case = bl.record.load_record(res.notebook)["cases"][0]
    assert case.evidence[harness.EVIDENCE].observed == harness.STATE  # the user's edit
