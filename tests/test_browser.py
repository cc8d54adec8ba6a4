"""A real browser check: JupyterLab headless, Debian's Chromium driven by Playwright.

Opens notebooks/01_shift_start.ipynb (a copy in a scratch folder, so the
repository's notebook is never autosaved with outputs), runs all cells, takes
a screenshot, and checks that the panel's widgets and the map rendered and
that no error output appeared. The server is always stopped afterwards.

Needs /usr/bin/chromium (``make test`` installs Debian's package); Playwright
never downloads a browser here.
"""

import os
import secrets
import shutil
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import pytest

pytestmark = pytest.mark.browser

REPO = Path(__file__).resolve().parents[1]
CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]
NOTEBOOK = "01_shift_start.ipynb"
#: where the screenshot is also copied for a person to look at
SCREENSHOT_COPY = Path("/tmp/frontshift_browser_check.png")


def _free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture
def lab(tmp_path):
    """JupyterLab on a free loopback port with a token, serving a scratch copy of the repo."""
    if not Path(CHROMIUM).exists():
        pytest.fail(f"{CHROMIUM} missing: install Debian's chromium (make browser-deps)")
    root = tmp_path / "lab"
    (root / "notebooks").mkdir(parents=True)
    shutil.copy(REPO / "notebooks" / NOTEBOOK, root / "notebooks" / NOTEBOOK)
    (root / "sample_grids").symlink_to(REPO / "sample_grids")
    port, token = _free_port(), secrets.token_hex(16)
    settings = tmp_path / "settings" / "@jupyterlab" / "apputils-extension"
    settings.mkdir(parents=True)
    # no news or update pop-ups (and no fetching them)
    (settings / "notification.jupyterlab-settings").write_text(
        '{"fetchNews": "false", "checkForUpdates": false}')
    env = dict(os.environ, JUPYTER_CONFIG_DIR=str(tmp_path / "cfg"),
               JUPYTER_RUNTIME_DIR=str(tmp_path / "rt"), JUPYTER_DATA_DIR=str(tmp_path / "data"),
               JUPYTERLAB_SETTINGS_DIR=str(tmp_path / "settings"), MPLBACKEND="Agg")
    # the kernel must be this environment's Python (kit installed)
    kernels = tmp_path / "data" / "kernels" / "python3"
    kernels.mkdir(parents=True)
    (kernels / "kernel.json").write_text(
        '{"argv": ["%s", "-m", "ipykernel_launcher", "-f", "{connection_file}"], '
        '"display_name": "Python 3", "language": "python"}' % sys.executable)
    cmd = [sys.executable, "-m", "jupyterlab", "--no-browser", "--ServerApp.ip=127.0.0.1",
           f"--ServerApp.port={port}", "--ServerApp.port_retries=0",
           f"--IdentityProvider.token={token}", f"--ServerApp.root_dir={root}",
           "--LabApp.expose_app_in_browser=True", "--ServerApp.disable_check_xsrf=False",
           "--LabApp.news_url=", "--LabApp.extension_manager=readonly",
           "--LabApp.check_for_updates_class=jupyterlab.NeverCheckForUpdate"]
    if hasattr(os, "geteuid") and os.geteuid() == 0:  # containers often run as root
        cmd.append("--allow-root")
    log = open(tmp_path / "lab.log", "w")  # noqa: SIM115 - closed in the teardown
    proc = subprocess.Popen(cmd, stdout=log, stderr=subprocess.STDOUT, env=env, cwd=root,
                            start_new_session=True)
    try:
        url = f"http://127.0.0.1:{port}"
        deadline = time.time() + 120
        while True:
            try:
                with urllib.request.urlopen(f"{url}/api/status?token={token}", timeout=5) as r:
                    if r.status == 200:
                        break
            except OSError:
                pass
            if proc.poll() is not None or time.time() > deadline:
                raise RuntimeError("JupyterLab did not start: "
                                   + (tmp_path / "lab.log").read_text()[-2000:])
            time.sleep(1.0)
        yield {"url": url, "token": token, "root": root}
    finally:
        try:
            os.killpg(proc.pid, signal.SIGTERM)
            proc.wait(timeout=30)
        except (ProcessLookupError, subprocess.TimeoutExpired):
            try:
                os.killpg(proc.pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
            proc.wait(timeout=30)
        log.close()


_KERNEL_IDLE = """() => {
  const w = window.jupyterapp && window.jupyterapp.shell.currentWidget;
  const k = w && w.sessionContext && w.sessionContext.session && w.sessionContext.session.kernel;
  return !!k && k.status === 'idle';
}"""

_CELLS_DONE = """() => {
  const prompts = Array.from(document.querySelectorAll('.jp-CodeCell .jp-InputPrompt'));
  if (prompts.length === 0) return false;
  return prompts.every(p => /\\[\\d+\\]/.test(p.textContent));
}"""


def _wait(page, script, timeout_s, what):
    deadline = time.time() + timeout_s
    while time.time() < deadline:
        if page.evaluate(script):
            return
        time.sleep(1.0)
    raise AssertionError(f"timed out after {timeout_s} s waiting for {what}")


def test_shift_start_notebook_in_chromium(lab, tmp_path):
    from playwright.sync_api import sync_playwright

    shot = tmp_path / "shift_start.png"
    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=CHROMIUM, headless=True,
                                     args=CHROMIUM_ARGS)
        try:
            page = browser.new_page(viewport={"width": 1400, "height": 1000})
            page.goto(f"{lab['url']}/lab/tree/notebooks/{NOTEBOOK}?token={lab['token']}",
                      timeout=120_000)
            page.wait_for_selector(".jp-Notebook .jp-Cell", timeout=120_000)
            _wait(page, _KERNEL_IDLE, 180, "the kernel to start")
            page.evaluate("window.jupyterapp.commands.execute('notebook:run-all-cells')")
            _wait(page, _CELLS_DONE, 900, "every cell to run")
            _wait(page, _KERNEL_IDLE, 300, "the kernel to finish")
            # scroll to the panel and let the widget views render
            page.wait_for_selector(".jupyter-widgets img", timeout=120_000)
            page.locator(".widget-play").first.scroll_into_view_if_needed()
            time.sleep(2.0)
            page.screenshot(path=str(shot), full_page=False)
            shutil.copy(shot, SCREENSHOT_COPY)

            errors = page.locator(".jp-OutputArea-output[data-mime-type="
                                  "'application/vnd.jupyter.stderr']").all_inner_texts()
            assert not [e for e in errors if "Traceback" in e or "Error" in e], errors
            assert page.locator(".jp-OutputArea-output .jp-RenderedText:has-text('Error')"
                                ).count() == 0
            # widgets: the time slider, the play button, the pickers and the buttons
            assert page.locator(".jupyter-widgets.widget-slider, .widget-slider").count() >= 1
            assert page.locator(".jupyter-widgets.widget-play, .widget-play").count() >= 1
            assert page.locator("button:has-text('Restore defaults')").count() == 1
            assert page.get_by_text("Decision support only").count() >= 1
            # the map image rendered (decoded, not empty)
            sizes = page.evaluate("""() => Array.from(
                document.querySelectorAll('.jupyter-widgets img')).map(
                i => [i.naturalWidth, i.naturalHeight])""")
            assert any(w >= 400 and h >= 300 for w, h in sizes), sizes
            # the panel's message area reports fronts, not a problem
            html = page.content()
            assert "color:#a11d1d" not in html and "fronts at" in html
        finally:
            browser.close()
    assert shot.stat().st_size > 50_000
