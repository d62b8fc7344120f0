"""Fixtures for the live-browser tests: a throw-away JupyterLab server and a headless Chromium.

Everything Jupyter writes (config, data, runtime, IPython profile, lab user settings,
workspaces) goes under the test's temporary folder; the server serves a temporary copy of
the repository's ``dashboards/`` folder and is stopped by its PID at the end.

Requirements: Debian's ``/usr/bin/chromium`` (never the test tool's own browser download)
and the Python packages jupyterlab, ipywidgets, bqplot, ipykernel and playwright
(``.ci/run`` installs them: Debian's chromium, and the dashboard and test extras). Without them the tests skip, except when
``CI=true``: then a missing piece is a failure.
"""
from __future__ import annotations

import importlib.util
import json
import os
import shutil
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[2]
CHROMIUM = os.environ.get("DAMPLINE_CHROMIUM", "/usr/bin/chromium")
CHROMIUM_ARGS = [
    "--headless=new",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-dev-shm-usage",
]
IN_CI = os.environ.get("CI", "").strip().lower() == "true"

# JupyterLab user settings that keep a scripted run free of dialogs: start the default
# kernel without the "Select Kernel" dialog, no news pop-up, no update check.
LAB_USER_SETTINGS = {
    "@jupyterlab/notebook-extension/tracker.jupyterlab-settings": {"autoStartDefaultKernel": True},
    "@jupyterlab/apputils-extension/notification.jupyterlab-settings": {
        "fetchNews": "false",
        "checkForUpdates": False,
    },
}


def _missing_requirements() -> list[str]:
    missing = []
    if not (os.path.isfile(CHROMIUM) and os.access(CHROMIUM, os.X_OK)):
        missing.append(f"{CHROMIUM} (apt-get install -y chromium)")
    for mod in ("playwright", "jupyterlab", "ipywidgets", "bqplot", "ipykernel"):
        if importlib.util.find_spec(mod) is None:
            missing.append(f"python package {mod}")
    return missing


@pytest.fixture(scope="session")
def browser_requirements():
    missing = _missing_requirements()
    if missing:
        msg = "live-browser test needs: " + ", ".join(missing) + " (apt-get install chromium; pip install -e .[dashboard,test])"
        if IN_CI:
            pytest.fail("CI=true but " + msg, pytrace=False)
        pytest.skip(msg)


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class LabServer:
    def __init__(self, proc: subprocess.Popen, base_url: str, root: Path, log: Path):
        self.proc, self.base_url, self.root, self.log = proc, base_url, root, log

    def log_tail(self, n: int = 60) -> str:
        try:
            return "\n".join(self.log.read_text(errors="replace").splitlines()[-n:])
        except OSError:
            return "(no server log)"

    def stop(self) -> None:
        """Stop the server by its PID (SIGTERM lets it shut its kernels down), then make sure."""
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            try:
                self.proc.wait(timeout=15)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(timeout=10)
        # The server ran in its own session: clear any kernel it left behind in that group.
        try:
            os.killpg(self.proc.pid, signal.SIGKILL)
        except (ProcessLookupError, PermissionError):
            pass


@pytest.fixture
def lab_server(browser_requirements, tmp_path):
    """JupyterLab on 127.0.0.1:<free port>, no token, serving a temp copy of dashboards/."""
    root = tmp_path / "dashboards"
    shutil.copytree(
        REPO / "dashboards", root,
        ignore=shutil.ignore_patterns(".ipynb_checkpoints", "__pycache__", "*.html"),
    )
    home = tmp_path / "jupyter-home"
    dirs = {
        "JUPYTER_CONFIG_DIR": home / "config",
        "JUPYTER_DATA_DIR": home / "data",
        "JUPYTER_RUNTIME_DIR": home / "runtime",
        "IPYTHONDIR": home / "ipython",
        "JUPYTERLAB_SETTINGS_DIR": home / "lab-user-settings",
        "JUPYTERLAB_WORKSPACES_DIR": home / "lab-workspaces",
    }
    for d in dirs.values():
        d.mkdir(parents=True, exist_ok=True)
    for rel, content in LAB_USER_SETTINGS.items():
        p = dirs["JUPYTERLAB_SETTINGS_DIR"] / rel
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_text(json.dumps(content))

    env = dict(os.environ)
    env.update({k: str(v) for k, v in dirs.items()})
    # The kernel (same interpreter as this test) must import this checkout's dampline.
    env["PYTHONPATH"] = os.pathsep.join(filter(None, [str(REPO), env.get("PYTHONPATH")]))
    env.pop("JUPYTER_PATH", None)
    env["PYTHONUNBUFFERED"] = "1"

    port = _free_port()
    log = tmp_path / "jupyterlab.log"
    cmd = [
        sys.executable, "-m", "jupyterlab",
        "--no-browser", "--allow-root",
        "--ServerApp.ip=127.0.0.1", f"--ServerApp.port={port}", "--ServerApp.port_retries=0",
        "--IdentityProvider.token=", "--ServerApp.password=",
        f"--ServerApp.root_dir={root}",
        f"--LabApp.user_settings_dir={dirs['JUPYTERLAB_SETTINGS_DIR']}",
        f"--LabApp.workspaces_dir={dirs['JUPYTERLAB_WORKSPACES_DIR']}",
        "--LabApp.expose_app_in_browser=True",
        "--LabApp.news_url=",
    ]
    with open(log, "wb") as fh:
        proc = subprocess.Popen(cmd, cwd=root, env=env, stdout=fh, stderr=subprocess.STDOUT,
                                stdin=subprocess.DEVNULL, start_new_session=True)
    server = LabServer(proc, f"http://127.0.0.1:{port}", root, log)
    try:
        deadline = time.monotonic() + 60
        while True:
            if proc.poll() is not None:
                pytest.fail(f"JupyterLab exited with {proc.returncode}:\n{server.log_tail()}",
                            pytrace=False)
            try:
                with urllib.request.urlopen(server.base_url + "/api/status", timeout=2) as r:
                    if r.status == 200:
                        break
            except OSError:
                pass
            if time.monotonic() > deadline:
                pytest.fail(f"JupyterLab did not answer /api/status in 60 s:\n{server.log_tail()}",
                            pytrace=False)
            time.sleep(0.2)
        yield server
    finally:
        server.stop()


@pytest.fixture
def page(browser_requirements):
    """A fresh headless Chromium page (1600x2400, tall enough for the whole dashboard) from Debian's chromium."""
    from playwright.sync_api import sync_playwright

    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS, headless=True)
        try:
            context = browser.new_context(viewport={"width": 1600, "height": 2400},
                                          accept_downloads=True)
            pg = context.new_page()
            pg.console_errors = []  # type: ignore[attr-defined]
            pg.on("console", lambda m: m.type == "error" and pg.console_errors.append(m.text))
            pg.on("pageerror", lambda e: pg.console_errors.append(str(e)))
            yield pg
        finally:
            browser.close()
