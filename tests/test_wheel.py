"""The built wheel is the whole app: installed in a fresh virtual environment and run from a folder outside the
repository, it migrates, loads the demo and serves pages with their stylesheets and scripts.

Costs about 30-60 s (wheel build ~7 s, installing the runtime dependencies from pip's cache without byte-compiling
~20 s, the server start). Needs pip to reach its index (PyPI) or cache for the build backend and dependencies.
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

import httpx2 as httpx
import pytest

from benchmarks._live import free_port, wait_until_serving
from server.config import REPO_ROOT
from server.services.seed import DEMO_LOGIN

pytestmark = pytest.mark.slow


def _pip(*args: str) -> None:
    env = {**os.environ, "PIP_DISABLE_PIP_VERSION_CHECK": "1"}
    done = subprocess.run([sys.executable, "-m", "pip", *args], env=env, capture_output=True, text=True)
    assert done.returncode == 0, f"pip {' '.join(args)} failed:\n{done.stdout}\n{done.stderr}"


def _outside_env(home: Path) -> dict[str, str]:
    """The environment of a user who has only the installed wheel: no repository on any path."""
    env = {k: v for k, v in os.environ.items() if not k.startswith(("LIFTMATCH_", "PYTHON"))}
    return env | {"HOME": str(home), "LIFTMATCH_DEMO": "1", "LIFTMATCH_PASSWORD_TIME_COST": "1",
                  "LIFTMATCH_PASSWORD_MEMORY_KIB": "1024", "LIFTMATCH_PASSWORD_PARALLELISM": "1"}


def test_built_wheel_installs_migrates_and_serves_outside_the_repository(tmp_path: Path) -> None:
    dist = tmp_path / "dist"
    _pip("wheel", "--no-deps", "--quiet", "--wheel-dir", str(dist), str(REPO_ROOT))
    (wheel,) = dist.glob("liftmatch-*.whl")
    venv = tmp_path / "venv"
    subprocess.run([sys.executable, "-m", "venv", "--without-pip", str(venv)], check=True)
    python = venv / "bin" / "python"
    _pip("--python", str(python), "install", "--quiet", "--no-compile", str(wheel))

    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    env = _outside_env(tmp_path)
    where = subprocess.run([str(python), "-c", "import server.resources as r; print(r.__file__); print(r.web_dir()); "
                            "print(r.migrations_dir())"], cwd=elsewhere, env=env, capture_output=True, text=True,
                           check=True).stdout.split()
    assert all(Path(p).is_relative_to(venv) for p in where), where  # the package's own copies, not the checkout

    port = free_port()
    log_path = tmp_path / "server.log"
    with open(log_path, "w") as log:
        proc = subprocess.Popen([str(venv / "bin" / "liftmatch"), "demo", "--port", str(port)], cwd=elsewhere,
                                env=env, stdout=log, stderr=subprocess.STDOUT)
        base = f"http://127.0.0.1:{port}"
        try:
            wait_until_serving(proc, base, log_path, timeout_s=120)
            with httpx.Client(base_url=base, timeout=30) as client:
                login = client.get("/login")
                assert login.status_code == 200, login.text
                assets = re.findall(r'(?:href|src)="(?:https?://[^/"]+)?(/static/[^"]+)"', login.text)
                assert any(a.endswith(".css") for a in assets) and any(a.endswith(".js") for a in assets), assets
                for asset in assets:
                    got = client.get(asset)
                    assert got.status_code == 200, asset
                    kind = "text/css" if asset.endswith(".css") else "javascript"
                    assert kind in got.headers["content-type"] and len(got.content) > 100, asset
                token = login.text.split('name="csrf_token" value="', 1)[1].split('"', 1)[0]
                signed_in = client.post("/login", data={"email": DEMO_LOGIN[0], "password": DEMO_LOGIN[1],
                                                        "csrf_token": token})
                assert signed_in.status_code == 303 and "login" not in signed_in.headers["location"], signed_in.text
                motors = client.get("/parts/motors")
                assert motors.status_code == 200 and "NS-M2212-920" in motors.text  # a demo part, loaded from the wheel
        finally:
            proc.terminate()
            proc.wait(timeout=20)
    # The embedded database was created beside the user, not inside the package or the repository.
    assert (elsewhere / "var" / "liftmatch.db").is_file()
