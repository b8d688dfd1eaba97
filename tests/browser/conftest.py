"""Real-browser fixtures: the app served by uvicorn on 127.0.0.1 (demo data loaded) and Debian's Chromium."""

from __future__ import annotations

import os
import shutil
import socket
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from benchmarks._live import wait_until_serving
from server.config import REPO_ROOT

CHROMIUM = os.environ.get("CHROMIUM", "/usr/bin/chromium")
ARGS = ["--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage", "--disable-quic",
        "--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync",
        "--disable-extensions", "--disable-default-apps", "--mute-audio"]
OUTPUT = REPO_ROOT / "test-output"

if not shutil.which(CHROMIUM):
    if os.environ.get("CI"):
        raise RuntimeError("chromium missing: scripts/test.sh must install it")
    pytest.skip("chromium not installed", allow_module_level=True)


@pytest.fixture(scope="session")
def live_server(tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    folder: Path = tmp_path_factory.mktemp("live")
    env = {**os.environ, "LIFTMATCH_DATABASE_URL": f"sqlite:///{folder / 'live.db'}",
           "LIFTMATCH_SECRET_KEY": "browser-test-secret-0123456789", "LIFTMATCH_PASSWORD_TIME_COST": "1",
           "LIFTMATCH_PASSWORD_MEMORY_KIB": "1024", "LIFTMATCH_PASSWORD_PARALLELISM": "1"}
    for args in (["migrate"], ["load-demo", "--with-demo-logins"]):
        done = subprocess.run([sys.executable, "-m", "server.cli", *args], env=env, capture_output=True, text=True)
        assert done.returncode == 0, done.stderr
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    log = open(folder / "server.log", "w")  # noqa: SIM115 (closed below)
    proc = subprocess.Popen([sys.executable, "-m", "uvicorn", "server.main:create_app", "--factory",
                             "--host", "127.0.0.1", "--port", str(port), "--log-level", "warning"],
                            env=env, stdout=log, stderr=subprocess.STDOUT, cwd=REPO_ROOT)
    base = f"http://127.0.0.1:{port}"
    wait_until_serving(proc, base, folder / "server.log", timeout_s=90)
    yield base
    proc.terminate()
    proc.wait(timeout=10)
    log.close()


@pytest.fixture(scope="session")
def browser() -> Iterator[Any]:
    from playwright.sync_api import sync_playwright

    with sync_playwright() as pw:
        b = pw.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)
        yield b
        b.close()


@pytest.fixture
def page(browser: Any) -> Iterator[Any]:
    context = browser.new_context(viewport={"width": 1300, "height": 900})
    p = context.new_page()
    errors: list[str] = []
    p.on("pageerror", lambda e: errors.append(str(e)))
    p.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    p.js_errors = errors
    yield p
    context.close()


def screenshot(page: Any, name: str) -> Path:
    OUTPUT.mkdir(exist_ok=True)
    path = OUTPUT / f"{name}.png"
    page.screenshot(path=str(path), full_page=True)
    return path

