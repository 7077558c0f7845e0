"""Drive the workbench template in a real Jupyter front end and chromium; report what was shown.

Run by ``test_workbench_browser.py`` (and the widget benchmark) inside a
network namespace whose only interface is loopback, so any request to the
internet (a CDN script, a font) fails and is reported instead of passing
unnoticed. Usage::

    python tests/browser/harness.py --out RESULT.json [--screenshot PNG] [--repaints N]
                                    [--case template|bench] [--front lab|notebook]

Steps: copy ``templates_nb/workbench.ipynb`` into a fresh folder, start
JupyterLab 4 (``--front lab``, the default) or Jupyter Notebook 7
(``--front notebook``) from this Python on 127.0.0.1 at a free port, open the notebook
in Debian's chromium through Playwright, wait for the kernel, run all
cells, wait for the workbench, read the posterior it shows, pick the
"uniform" prior scenario, read again, set the relief-valve tell-tale to
"burst" in the evidence editor, read again, time a few chart repaints, save
a screenshot and write everything as JSON. With ``--case bench`` the page
shows the benchmark's invented 20 x 30 case instead and only the repaints
are timed. Exit 0 when the run completed
(the test decides pass or fail from the JSON), 2 when it could not.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import socket
import subprocess
import sys
import tempfile
import time
import traceback
import urllib.request
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
TEMPLATE = ROOT / "templates_nb" / "workbench.ipynb"
CHROMIUM = "/usr/lib/chromium/chromium"
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                 "--disable-background-networking", "--disable-component-update",
                 "--disable-sync", "--disable-dev-shm-usage"]
SCENARIO = "uniform"
EVIDENCE, STATE = "relief valve tell-tale", "burst"


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


FRONTS = {"lab": "JupyterLab 4", "notebook": "Jupyter Notebook 7"}


def start_server(folder: Path, port: int, token: str, log, front: str = "lab"
                 ) -> subprocess.Popen:
    env = dict(os.environ)
    for var, sub in (("JUPYTER_CONFIG_DIR", "config"), ("JUPYTER_RUNTIME_DIR", "runtime"),
                     ("IPYTHONDIR", "ipython")):
        env[var] = str(folder.parent / sub)
    settings = folder.parent / "lab-settings"
    news = settings / "@jupyterlab" / "apputils-extension" / "notification.jupyterlab-settings"
    news.parent.mkdir(parents=True, exist_ok=True)
    news.write_text(json.dumps({"fetchNews": "false"}))  # no news prompt over the page
    common = ["--ip=127.0.0.1", f"--port={port}", "--no-browser", "--allow-root",
              f"--IdentityProvider.token={token}", f"--ServerApp.root_dir={folder}",
              "--ServerApp.port_retries=0"]
    if front == "notebook":  # Notebook 7: the same server, its own application class
        cmd = [sys.executable, "-m", "notebook", *common,
               "--JupyterNotebookApp.expose_app_in_browser=True",
               f"--JupyterNotebookApp.user_settings_dir={settings}"]
    else:
        cmd = [sys.executable, "-m", "jupyterlab", *common, "--LabApp.expose_app_in_browser=True",
               "--LabApp.news_url=", "--LabApp.extension_manager=readonly",
               "--LabApp.check_for_updates_class=jupyterlab.NeverCheckForUpdate",
               f"--LabApp.user_settings_dir={settings}"]
    return subprocess.Popen(cmd, stdout=log, stderr=subprocess.STDOUT, env=env,
                            start_new_session=True)


def wait_for_server(port: int, token: str, proc: subprocess.Popen, timeout: float = 60) -> None:
    url = f"http://127.0.0.1:{port}/api/status?token={token}"
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        if proc.poll() is not None:
            raise RuntimeError(f"jupyter server exited with code {proc.returncode}")
        try:
            with urllib.request.urlopen(url, timeout=2) as r:
                if r.status == 200:
                    return
        except OSError:
            time.sleep(0.3)
    raise TimeoutError(f"jupyter server on port {port} did not answer within {timeout:.0f} s")


KERNEL_IDLE = """() => {
  const w = window.jupyterapp && window.jupyterapp.shell.currentWidget;
  const k = w && w.sessionContext && w.sessionContext.session && w.sessionContext.session.kernel;
  return !!k && k.connectionStatus === 'connected' && k.status === 'idle';
}"""

READ_POSTERIOR = """() => {
  const el = document.querySelector('.bl-workbench .bl-posterior');
  if (!el) return null;
  const rows = {};
  for (const tr of el.querySelectorAll('tbody tr')) {
    const td = tr.querySelectorAll('td');
    if (td.length === 2 && td[1].textContent.trim()) rows[td[0].textContent] = td[1].textContent;
  }
  return {map: el.querySelector('.bl-map').textContent,
          map_p: el.querySelector('.bl-map-p').textContent, posterior: rows,
          text: el.textContent};
}"""

# Time from the <select>'s change event to the waterfall chart's SVG being replaced.
ARM_REPAINT = """() => {
  window.__bl = {t0: null, t1: null};
  const host = document.querySelector('.bl-workbench .bl-chart-waterfall');
  const sel = [...document.querySelectorAll('.bl-workbench .widget-dropdown')]
    .find(d => d.querySelector('label') && d.querySelector('label').textContent.trim() === 'prior scenario')
    .querySelector('select');
  sel.addEventListener('change', () => { window.__bl.t0 = performance.now(); },
                       {capture: true, once: true});
  const obs = new MutationObserver(() => {
    if (window.__bl.t0 !== null && window.__bl.t1 === null) {
      window.__bl.t1 = performance.now(); obs.disconnect();
    }
  });
  obs.observe(host, {childList: true, subtree: true, characterData: true});
}"""


def dropdown(page, label: str):
    return page.locator(".bl-workbench .widget-dropdown").filter(
        has=page.locator("label", has_text=label)).first.locator("select")


def bench_notebook(path: Path) -> None:
    """A notebook showing the workbench on the benchmark's invented 20 x 30 case."""
    import nbformat

    bench_dir = ROOT / "tests" / "benchmarks"
    nb = nbformat.v4.new_notebook()
    nb.cells = [nbformat.v4.new_code_cell(
        f"import sys\nsys.path.insert(0, {str(bench_dir)!r})\nimport beliefledger as bl\n"
        "from bench_widgets import synthetic_case\ncase = synthetic_case(20, 30)\n"
        "wb = bl.Workbench(case)\nwb")]
    nb.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3",
                                 "language": "python"}
    nbformat.write(nb, path)


def run(args) -> dict:
    from playwright.sync_api import sync_playwright

    result: dict = {"ok": False, "steps": [], "external_requests": [], "console_errors": [],
                    "case": args.case, "front": args.front}
    work = Path(tempfile.mkdtemp(prefix="bl-browser-"))
    folder = work / "nb"
    folder.mkdir()
    if args.case == "bench":
        bench_notebook(folder / "workbench.ipynb")
    else:
        shutil.copy(TEMPLATE, folder / "workbench.ipynb")
    port, token = free_port(), os.urandom(16).hex()
    log = open(work / "server.log", "w")  # noqa: SIM115 - closed in finally
    proc = start_server(folder, port, token, log, args.front)
    t_start = time.monotonic()

    def step(name: str) -> None:
        result["steps"].append({"step": name, "seconds": round(time.monotonic() - t_start, 2)})

    try:
        wait_for_server(port, token, proc)
        step("server up")
        with sync_playwright() as p:
            ctx = p.chromium.launch_persistent_context(
                str(work / "profile"), executable_path=CHROMIUM, headless=True,
                args=CHROMIUM_ARGS, viewport={"width": 1400, "height": 1800})
            page = ctx.pages[0] if ctx.pages else ctx.new_page()
            local = (f"http://127.0.0.1:{port}", f"ws://127.0.0.1:{port}")

            def on_request(req):
                if not req.url.startswith(local) and not req.url.startswith(("data:", "blob:")):
                    result["external_requests"].append(req.url)

            page.on("request", on_request)
            page.on("console", lambda m: result["console_errors"].append(m.text)
                    if m.type == "error" else None)
            page.set_default_timeout(60_000)
            where = ("notebooks/workbench.ipynb?" if args.front == "notebook"
                     else "lab/tree/workbench.ipynb?reset&")
            page.goto(f"http://127.0.0.1:{port}/{where}token={token}")
            page.wait_for_selector(".jp-Notebook .jp-Cell")
            page.wait_for_function(KERNEL_IDLE, timeout=60_000)
            step("kernel idle")
            page.evaluate("() => { window.jupyterapp.commands.execute('notebook:run-all-cells'); }")
            page.wait_for_selector(".bl-workbench .bl-posterior .bl-map", timeout=90_000)
            step("workbench shown")
            if args.case == "template":
                page.wait_for_selector(".jp-RenderedSVG, .jp-RenderedImage", timeout=90_000)
            page.wait_for_function(KERNEL_IDLE, timeout=60_000)
            step("all cells run")
            result["initial"] = page.evaluate(READ_POSTERIOR)
            result["chart_svgs"] = page.locator(".bl-workbench svg.bl-live-chart").count()
            if args.case == "template":
                interact(page, result, step)
            repaints(page, result, args.repaints)
            if args.case == "template" and args.saved:
                edit_and_save(page, result, step)
                shutil.copy(folder / "workbench.ipynb", args.saved)
            page.locator(".bl-workbench").first.scroll_into_view_if_needed()
            if args.screenshot:
                Path(args.screenshot).parent.mkdir(parents=True, exist_ok=True)
                page.screenshot(path=args.screenshot, full_page=False)
            step("done")
            ctx.close()
        result["ok"] = True
    except Exception as exc:
        result["error"] = "".join(traceback.format_exception_only(type(exc), exc)).strip()
        result["traceback"] = traceback.format_exc()
    finally:
        try:
            os.killpg(proc.pid, 15)
            proc.wait(timeout=15)
        except (ProcessLookupError, subprocess.TimeoutExpired):
            os.killpg(proc.pid, 9)
        log.close()
        result["server_log_tail"] = (work / "server.log").read_text(errors="replace")[-3000:]
        result["seconds"] = round(time.monotonic() - t_start, 1)
        shutil.rmtree(work, ignore_errors=True)
    return result


def interact(page, result: dict, step) -> None:
    """The template's checks: a scenario change, then an observed state."""
    # 1. the prior-scenario dropdown
    before = result["initial"]["text"]
    dropdown(page, "prior scenario").select_option(SCENARIO)
    page.wait_for_function(
        "(b) => { const e = document.querySelector('.bl-workbench .bl-posterior');"
        " return e && e.textContent !== b; }", arg=before)
    result["after_scenario"] = page.evaluate(READ_POSTERIOR)
    step("scenario changed")

    # 2. an observed state, in the evidence editor's tab
    page.locator(".bl-workbench .lm-TabBar-tab", has_text="evidence").first.click()
    dropdown(page, "evidence").select_option(EVIDENCE)
    page.wait_for_function(
        "(ev) => [...document.querySelectorAll('.bl-workbench b')]"
        ".some(b => b.textContent === ev)", arg=EVIDENCE)
    before = result["after_scenario"]["text"]
    dropdown(page, "observed").select_option(STATE)
    page.wait_for_function(
        "(b) => { const e = document.querySelector('.bl-workbench .bl-posterior');"
        " return e && e.textContent !== b; }", arg=before)
    result["after_observation"] = page.evaluate(READ_POSTERIOR)
    page.wait_for_function(KERNEL_IDLE, timeout=30_000)
    try:  # the status line is set after the views refresh
        page.wait_for_function(
            "(t) => { const e = document.querySelector('.bl-workbench .bl-status');"
            " return e && e.textContent.includes(t); }",
            arg=f"observed as '{STATE}'", timeout=45_000)
    except Exception:  # noqa: BLE001 - the test reports what was shown
        pass
    result["status"] = page.locator(".bl-workbench .bl-status").first.text_content()
    step("observation changed")


ADDED_CELL = (f"case.observe({EVIDENCE!r}, {STATE!r})  # typed in the browser\n"
              "case")
NOT_DIRTY = """() => { const w = window.jupyterapp.shell.currentWidget;
  return !!w && !!w.context && !w.context.model.dirty; }"""


def edit_and_save(page, result: dict, step) -> None:
    """What an analyst does last: add a cell at the end, run it, save with Ctrl+S.

    The text goes in through the editor (``insert_text``: no key events, so no
    auto-closed brackets); the save goes through JupyterLab's own save command
    bound to the keyboard shortcut, so the file on disk is exactly what the
    front end writes (lists of lines, cell ids, outputs, metadata)."""
    cells = page.locator(".jp-Notebook .jp-Cell")
    n_before = cells.count()
    cells.nth(n_before - 1).locator(".jp-InputPrompt").click()
    page.keyboard.press("Escape")
    page.keyboard.press("b")  # insert a cell below, in command mode
    page.wait_for_function(f"() => document.querySelectorAll('.jp-Notebook .jp-Cell').length"
                           f" > {n_before}")
    page.keyboard.press("Enter")  # edit mode
    page.keyboard.insert_text(ADDED_CELL)
    page.keyboard.press("Shift+Enter")
    page.wait_for_function(KERNEL_IDLE, timeout=30_000)
    cells.nth(n_before).locator(".jp-OutputArea-output").first.wait_for(timeout=30_000)
    step("cell added and run")
    page.keyboard.press("Escape")
    page.keyboard.press("Control+s")
    page.wait_for_function(NOT_DIRTY, timeout=30_000)
    result["saved"] = True
    step("saved through the page")


def repaints(page, result: dict, n: int) -> None:
    """Time ``n`` scenario changes: the select's change event -> waterfall SVG replaced."""
    names = [o.get_attribute("value") or o.text_content()
             for o in dropdown(page, "prior scenario").locator("option").all()]
    times = []
    for i in range(n):
        target = names[i % len(names)]
        if target == dropdown(page, "prior scenario").input_value():
            target = names[(i + 1) % len(names)]
        page.evaluate(ARM_REPAINT)
        dropdown(page, "prior scenario").select_option(target)
        page.wait_for_function("() => window.__bl.t1 !== null", timeout=30_000)
        times.append(round(float(page.evaluate("() => window.__bl.t1 - window.__bl.t0")), 1))
        page.wait_for_function(KERNEL_IDLE, timeout=30_000)
    result["repaint_ms"] = times
    if SCENARIO in names:
        dropdown(page, "prior scenario").select_option(SCENARIO)
        page.wait_for_function(KERNEL_IDLE, timeout=30_000)


def network_isolated() -> bool:
    """True when nothing but loopback is reachable (the namespace is in force)."""
    for host in ("192.0.2.1", "1.1.1.1"):  # TEST-NET-1 and a public resolver
        try:
            with socket.create_connection((host, 443), timeout=2):
                return False
        except OSError:
            continue
    return True


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", required=True, help="where to write the JSON result")
    ap.add_argument("--screenshot", help="PNG path for a screenshot of the workbench")
    ap.add_argument("--repaints", type=int, default=5, help="chart repaints to time")
    ap.add_argument("--saved", help="after the checks, add and run a cell, save the notebook "
                    "through the page and copy the saved file here")
    ap.add_argument("--front", choices=sorted(FRONTS), default="lab",
                    help="the front end: JupyterLab 4 (lab) or Jupyter Notebook 7 (notebook)")
    ap.add_argument("--case", choices=["template", "bench"], default="template",
                    help="the workbench template (and its checks) or the invented 20 x 30 "
                         "benchmark case (repaint timing only)")
    args = ap.parse_args(argv)
    isolated = network_isolated()
    result = run(args)
    result["network_isolated"] = isolated
    Path(args.out).write_text(json.dumps(result, indent=1))
    return 0 if result["ok"] else 2


if __name__ == "__main__":
    sys.exit(main())
