"""Fixtures that put notebooks in front of a real browser: a private JupyterLab server on
127.0.0.1 and headless Debian Chromium driven by Playwright, with guards that fail a test on any
request leaving the machine and on any browser console error or Vega warning.

Chromium comes from Debian (``apt-get install chromium``); Playwright's own browser download is
not used. Without Chromium the browser tests are skipped locally and fail when ``CI`` is set.
"""

from __future__ import annotations

import json
import os
import re
import secrets
import shutil
import signal
import socket
import subprocess
import sys
import time
import urllib.error
import urllib.request
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any
from urllib.parse import urlsplit

import pytest

CHROMIUM = Path("/usr/bin/chromium")
CHROMIUM_ARGS = [
    "--no-sandbox",  # CI runs as root
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
    "--disable-quic",
    # A second wall behind the request guard: no host name but 127.0.0.1 resolves at all.
    "--host-resolver-rules=MAP * ~NOTFOUND, EXCLUDE 127.0.0.1",
]
LOCAL_HOST = "127.0.0.1"
SERVER_START_TIMEOUT = 90  # seconds
UI_TIMEOUT_MS = 90_000  # the longest any one awaited condition in the page may take
TRACEBACK = "Traceback (most recent call last)"
# Vega and Vega-Lite log their warnings to the console as "WARN <text>" (vega-util's logger),
# e.g. "WARN Conflicting scale property \"range\" ..."; the guard counts them as errors.
VEGA_WARNING = re.compile(r"^\s*(\[?vega|WARN\b)", re.IGNORECASE)
# The status bar's kernel item, e.g. "Python 3 (ipykernel) | Idle"; it reads
# "No Kernel | Initializing" until the kernel has started.
KERNEL_IDLE = re.compile(r"^(?!No Kernel).*\| Idle$")


def pytest_addoption(parser: pytest.Parser) -> None:
    parser.addoption(
        "--readme-screenshot",
        metavar="PATH",
        default=None,
        help="also write the explorer screenshot of the browser test to PATH (docs/explorer.png)",
    )


@pytest.hookimpl(wrapper=True)
def pytest_runtest_makereport(item: pytest.Item, call: pytest.CallInfo):
    """On a failing browser test, attach the server log and a screenshot of the page."""
    report = yield
    if not report.failed:
        return report
    funcargs = getattr(item, "funcargs", {})
    server = funcargs.get("lab_server")
    if isinstance(server, LabServer):
        report.sections.append(("JupyterLab server log", server.log_text()))
    page = funcargs.get("guarded_page")
    tmp_path = funcargs.get("tmp_path")
    if page is not None and tmp_path is not None and not page.is_closed():
        shot = tmp_path / f"failed-{report.when}.png"
        try:
            page.screenshot(path=shot, full_page=True)
            report.sections.append(("Page at the failure", f"screenshot: {shot}"))
        except Exception as err:  # noqa: BLE001 - a broken page must not hide the real failure
            report.sections.append(("Page at the failure", f"no screenshot: {err}"))
    return report


# ------------------------------------------------------------------------------- the browser
@pytest.fixture(scope="module")
def chromium_path() -> Path:
    """Debian's Chromium: skipped locally when missing, a failure when CI is set."""
    if not CHROMIUM.exists():
        message = (
            f"Chromium not found at {CHROMIUM}; install it with "
            "`sudo apt-get update && sudo apt-get install -y chromium` to run the browser tests."
        )
        if os.environ.get("CI"):
            pytest.fail(message)
        pytest.skip(message)
    return CHROMIUM


@pytest.fixture(scope="module")
def browser(chromium_path: Path):
    """A headless Chromium for one test module, launched through Playwright (module scope, so
    neither it nor the Lab server outlives the browser tests in a full run)."""
    sync_api = pytest.importorskip(
        "playwright.sync_api", reason="Playwright is missing: pip install -e '.[test]'"
    )
    sync_api.expect.set_options(timeout=UI_TIMEOUT_MS)
    with sync_api.sync_playwright() as playwright:
        chromium = playwright.chromium.launch(
            executable_path=str(chromium_path), headless=True, args=CHROMIUM_ARGS
        )
        yield chromium
        chromium.close()


def is_local(url: str) -> bool:
    """True for URLs that stay in this machine: 127.0.0.1, or data:/blob:/about: documents."""
    parts = urlsplit(url)
    return parts.scheme in ("data", "blob", "about") or parts.hostname == LOCAL_HOST


@dataclass
class PageGuard:
    """What a page tried that a test must not allow: outside requests, console errors and
    Vega warnings."""

    outside_requests: list[str] = field(default_factory=list)
    console_errors: list[str] = field(default_factory=list)

    def problems(self) -> list[str]:
        return [f"request leaving {LOCAL_HOST} (blocked): {u}" for u in self.outside_requests] + [
            f"browser console error: {e}" for e in self.console_errors
        ]


@contextmanager
def guarded(browser) -> Iterator[tuple[Any, PageGuard]]:
    """A fresh page whose requests to any host but 127.0.0.1 are blocked and recorded, and
    whose console errors and uncaught exceptions are recorded. Yields ``(page, guard)``."""
    guard = PageGuard()
    context = browser.new_context(
        viewport={"width": 1400, "height": 1000}, service_workers="block"
    )
    context.set_default_timeout(UI_TIMEOUT_MS)

    def route(route) -> None:
        if is_local(route.request.url):
            route.continue_()
        else:
            guard.outside_requests.append(route.request.url)
            route.abort("blockedbyclient")

    def block_socket(socket_route) -> None:
        guard.outside_requests.append(socket_route.url)
        socket_route.close()

    def console(message) -> None:
        if message.type == "error" or (message.type == "warning"
                                        and VEGA_WARNING.search(message.text)):
            guard.console_errors.append(f"{message.text} (at {message.location.get('url')})")

    context.route("**/*", route)
    # Web sockets bypass context.route: those to other hosts are intercepted and closed here.
    context.route_web_socket(lambda url: not is_local(url), block_socket)
    page = context.new_page()
    page.on("console", console)
    page.on("pageerror", lambda error: guard.console_errors.append(f"uncaught: {error}"))
    try:
        yield page, guard
    finally:
        context.close()


@pytest.fixture
def guarded_context(browser) -> Callable[[], Any]:
    """:func:`guarded` bound to the session's browser, for tests that inspect a guard."""
    return lambda: guarded(browser)


@pytest.fixture
def guarded_page(browser):
    """A page from :func:`guarded`; the test fails if the page called out or logged an error."""
    with guarded(browser) as (page, guard):
        yield page
    problems = guard.problems()
    assert not problems, "The page did what it must not:\n" + "\n".join(problems)


# ---------------------------------------------------------------------------- the Lab server
def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as sock:
        sock.bind((LOCAL_HOST, 0))
        return sock.getsockname()[1]


@dataclass
class LabServer:
    """A running JupyterLab server: its base URL, token, root directory, process and log."""

    url: str
    token: str
    root: Path
    log: Path
    process: subprocess.Popen
    tree: str = "lab/tree"  # where the front end opens a notebook ("notebooks" in Notebook 7)

    def notebook_url(self, name: str) -> str:
        return f"{self.url}/{self.tree}/{name}?token={self.token}"

    def log_text(self) -> str:
        return self.log.read_text(errors="replace") if self.log.exists() else "(no log)"


def _write_lab_settings(settings: Path) -> None:
    """User settings that keep JupyterLab quiet: no news or update notices over the page."""
    notices = settings / "@jupyterlab" / "apputils-extension" / "notification.jupyterlab-settings"
    notices.parent.mkdir(parents=True)
    notices.write_text('{"fetchNews": "false", "checkForUpdates": false}')


def _wait_until_serving(server: LabServer) -> None:
    """Poll the server's status API until it answers, the process dies, or time runs out."""
    opener = urllib.request.build_opener(urllib.request.ProxyHandler({}))
    deadline = time.monotonic() + SERVER_START_TIMEOUT
    while time.monotonic() < deadline and server.process.poll() is None:
        try:
            with opener.open(f"{server.url}/api/status?token={server.token}", timeout=5) as answer:
                if answer.status == 200:
                    return
        except (urllib.error.URLError, ConnectionError, TimeoutError):
            pass
        time.sleep(0.25)  # the polling interval of this readiness check
    raise RuntimeError(
        f"JupyterLab did not answer on {server.url} within {SERVER_START_TIMEOUT} s "
        f"(exit code {server.process.poll()}). Server log:\n{server.log_text()}"
    )


def _stop(process: subprocess.Popen) -> None:
    """Stop the server (it shuts its kernels down on SIGTERM); kill its group if it hangs."""
    if process.poll() is None:
        process.terminate()
        try:
            process.wait(timeout=30)
        except subprocess.TimeoutExpired:
            os.killpg(process.pid, signal.SIGKILL)
            process.wait(timeout=10)


@contextmanager
def jupyter_server(tmp_path_factory: pytest.TempPathFactory, app: str) -> Iterator[LabServer]:
    """A Jupyter front end's server (``app`` is ``"lab"`` for JupyterLab or ``"notebook"``
    for Notebook 7) started from this test's Python on 127.0.0.1 with a random port and token,
    a temporary root directory and private config, settings and runtime directories."""
    home = tmp_path_factory.mktemp(app)
    root = home / "notebooks"
    root.mkdir()
    if app == "lab":  # Notebook 7 has no such plugin and would fail on its settings
        _write_lab_settings(home / "settings")
    env = {
        **os.environ,
        "JUPYTER_CONFIG_DIR": str(home / "config"),
        "JUPYTER_RUNTIME_DIR": str(home / "runtime"),
        "JUPYTER_DATA_DIR": str(home / "data"),  # no user-level kernels or extensions
        "JUPYTER_PREFER_ENV_PATH": "1",
        "JUPYTERLAB_SETTINGS_DIR": str(home / "settings"),
        "JUPYTERLAB_WORKSPACES_DIR": str(home / "workspaces"),
        "IPYTHONDIR": str(home / "ipython"),
    }
    port, token = _free_port(), secrets.token_hex(16)
    command = [
        sys.executable, "-m", "jupyter", app,
        f"--ServerApp.ip={LOCAL_HOST}",
        f"--ServerApp.port={port}",
        "--ServerApp.port_retries=0",
        f"--IdentityProvider.token={token}",
        f"--ServerApp.root_dir={root}",
        "--ServerApp.open_browser=False",
        "--ServerApp.allow_root=True",  # CI runs as root
    ]
    if app == "lab":
        command += [
            "--LabApp.news_url=None",  # the server itself fetches nothing either
            "--LabApp.check_for_updates_class=jupyterlab.NeverCheckForUpdate",
            "--LabApp.extension_manager=readonly",
        ]
    log = home / "server.log"
    with log.open("wb") as log_file:
        process = subprocess.Popen(
            command, cwd=root, env=env, stdout=log_file, stderr=subprocess.STDOUT,
            stdin=subprocess.DEVNULL, start_new_session=True,
        )
    tree = "lab/tree" if app == "lab" else "notebooks"
    server = LabServer(f"http://{LOCAL_HOST}:{port}", token, root, log, process, tree)
    try:
        _wait_until_serving(server)
        yield server
    finally:
        _stop(process)


@pytest.fixture(scope="module")
def lab_server(
    tmp_path_factory: pytest.TempPathFactory, chromium_path: Path
) -> Iterator[LabServer]:
    """JupyterLab (see :func:`jupyter_server`), started only when there is a browser to use
    it."""
    pytest.importorskip("jupyterlab", reason="JupyterLab is missing: pip install -e '.[test]'")
    with jupyter_server(tmp_path_factory, "lab") as server:
        yield server


@pytest.fixture(scope="module")
def notebook7_server(
    tmp_path_factory: pytest.TempPathFactory, chromium_path: Path
) -> Iterator[LabServer]:
    """Jupyter Notebook 7 (see :func:`jupyter_server`)."""
    pytest.importorskip("notebook", reason="Notebook 7 is missing: pip install -e '.[test]'")
    with jupyter_server(tmp_path_factory, "notebook") as server:
        yield server


# ----------------------------------------------------------------------- driving a notebook
_CELLS_FINISHED = """() => {
    const prompts = [...document.querySelectorAll('.jp-CodeCell .jp-InputArea-prompt')];
    const failed = [...document.querySelectorAll('.jp-OutputArea-output')]
        .some((o) => o.textContent.includes('TRACEBACK'));
    const busy = prompts.some((p) => p.textContent.includes('*'));
    return !busy && (failed || prompts.every((p) => /\\[\\d+\\]/.test(p.textContent)));
}""".replace("TRACEBACK", TRACEBACK)


@dataclass
class NotebookPage:
    """A notebook open in JupyterLab in a guarded page."""

    page: Any  # playwright.sync_api.Page
    status_bar: bool = True  # JupyterLab has one; Notebook 7 does not

    def run_all_cells(self) -> None:
        """Run every cell through the Run menu; wait until each code cell has finished (or one
        failed) and fail if any cell raised."""
        self.page.locator(".lm-MenuBar-itemLabel", has_text=re.compile(r"^Run$")).click()
        self.page.locator(".lm-Menu-itemLabel", has_text=re.compile(r"^Run All Cells$")).click()
        self.page.wait_for_function(_CELLS_FINISHED)
        # Widget updates travel on the same channel before the kernel's "idle" status, so once
        # the status bar says Idle the page shows what the last cell left (without a status
        # bar, wait for what the page should show instead).
        if self.status_bar:
            self.page.locator(".jp-StatusBar-TextItem", has_text=KERNEL_IDLE).wait_for()
        failed = self.page.locator(".jp-OutputArea-output", has_text=TRACEBACK)
        assert failed.count() == 0, "A cell raised:\n" + "\n".join(failed.all_inner_texts())

    def close_left_sidebar(self) -> None:
        """Give the notebook the full width: clicking the open side panel's tab folds it."""
        self.page.locator(".jp-SideBar.jp-mod-left .lm-TabBar-tab.lm-mod-current").click()
        self.page.locator("#jp-left-stack").wait_for(state="hidden")

    def first_explorer(self) -> Any:
        """The first explorer in the notebook's output, once its heatmap is drawn."""
        explorer = self.page.locator(".jp-OutputArea-output .rankfold-explorer").first
        explorer.locator(".rankfold-heatmap .mark-rect path").first.wait_for()
        return explorer

    def run_whole_explorer_in_view(self) -> Any:
        """On a page tall and wide enough for the whole explorer, with the side panel folded,
        run every cell; return the first explorer once drawn."""
        self.page.set_viewport_size({"width": 1500, "height": 2000})
        self.close_left_sidebar()
        self.run_all_cells()
        return self.first_explorer()


def open_in(server: LabServer, page, source: Path) -> NotebookPage:
    """Copy a notebook into the server's root and open it in ``page``; in JupyterLab, wait
    until its kernel is idle."""
    shutil.copy(source, server.root / source.name)
    page.goto(server.notebook_url(source.name))
    page.locator(".jp-Notebook .jp-Cell").first.wait_for()
    lab = server.tree == "lab/tree"
    if lab:
        page.locator(".jp-StatusBar-TextItem", has_text=KERNEL_IDLE).wait_for()
    else:
        _wait_for_idle_kernel(server, page)
    return NotebookPage(page, status_bar=lab)


def _wait_for_idle_kernel(server: LabServer, page) -> None:
    """Wait until the server reports the notebook's kernel idle (Notebook 7 has no status
    bar). Notebook 7 at times asks which kernel to start although the notebook names one; the
    named one is preselected, so the dialog is accepted."""
    opener = urllib.request.build_opener(urllib.request.ProxyHandler({}))
    accept = page.locator(".jp-Dialog .jp-mod-accept")
    deadline = time.monotonic() + UI_TIMEOUT_MS / 1000
    while time.monotonic() < deadline:
        if accept.count() and accept.first.is_visible():
            accept.first.click()
        with opener.open(f"{server.url}/api/sessions?token={server.token}", timeout=5) as answer:
            sessions = json.loads(answer.read())
        if any(s.get("kernel", {}).get("execution_state") == "idle" for s in sessions):
            return
        time.sleep(0.25)  # the polling interval of this readiness check
    raise RuntimeError(f"No idle kernel within {UI_TIMEOUT_MS / 1000:.0f} s:\n"
                       f"{server.log_text()}")


@pytest.fixture
def open_notebook(lab_server: LabServer, guarded_page) -> Callable[[Path], NotebookPage]:
    """Open a notebook in JupyterLab in the guarded page (see :func:`open_in`)."""
    return lambda source: open_in(lab_server, guarded_page, source)


@pytest.fixture
def notebook_opener() -> Callable[[LabServer, Any, Path], NotebookPage]:
    """:func:`open_in`, for tests that open notebooks in several front ends."""
    return open_in
