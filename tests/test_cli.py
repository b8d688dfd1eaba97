"""The liftmatch command: exit codes, key printed alone on stdout, users from stdin, demo loading."""

from __future__ import annotations

import io
import subprocess
import sys
from pathlib import Path

import pytest
from fastapi.testclient import TestClient

from server.cli import main
from server.main import create_app
from tests.conftest import TEST_SECRET, make_settings


@pytest.fixture
def cli_env(db_url: str, monkeypatch: pytest.MonkeyPatch) -> str:
    monkeypatch.setenv("LIFTMATCH_DATABASE_URL", db_url)
    monkeypatch.setenv("LIFTMATCH_SECRET_KEY", TEST_SECRET)
    monkeypatch.setenv("LIFTMATCH_PASSWORD_TIME_COST", "1")
    monkeypatch.setenv("LIFTMATCH_PASSWORD_MEMORY_KIB", "1024")
    monkeypatch.setenv("LIFTMATCH_PASSWORD_PARALLELISM", "1")
    return db_url


def test_usage_error_exits_2(cli_env: str, capsys: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(SystemExit) as exc:
        main(["create-api-key", "--team", "X", "--scope", "admin"])
    assert exc.value.code == 2
    with pytest.raises(SystemExit) as exc:
        main(["no-such-command"])
    assert exc.value.code == 2


def test_failure_exits_1_with_one_line(cli_env: str, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["create-api-key", "--team", "Nobody", "--scope", "read"]) == 1
    err = capsys.readouterr().err.strip()
    assert err == "liftmatch: No team named 'Nobody'"


def test_team_user_and_key_flow(
    cli_env: str, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    assert main(["create-team", "Gamma"]) == 0
    capsys.readouterr()
    assert main(["create-team", "Gamma"]) == 1
    assert "already exists" in capsys.readouterr().err
    monkeypatch.setattr(sys, "stdin", io.StringIO("a-long-password\n"))
    assert main(["create-user", "eng@gamma.example", "--team", "Gamma", "--role", "engineer", "--password-stdin"]) == 0
    capsys.readouterr()
    assert main(["create-api-key", "--team", "Gamma", "--scope", "read"]) == 0
    out = capsys.readouterr().out
    assert out.count("\n") == 1 and out.startswith("lm_")
    key = out.strip()
    with TestClient(create_app(make_settings(cli_env))) as client:
        me = client.get("/api/v1/me", headers={"Authorization": f"Bearer {key}"}).json()
        assert me["team_name"] == "Gamma" and me["can_write"] is False


def test_short_password_is_refused(
    cli_env: str, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    main(["create-team", "Delta"])
    monkeypatch.setattr(sys, "stdin", io.StringIO("short\n"))
    assert main(["create-user", "a@delta.example", "--team", "Delta", "--role", "viewer", "--password-stdin"]) == 1
    assert "password: must be at least 8 characters" in capsys.readouterr().err


def test_load_demo_then_key_lists_demo_motors_and_other_team_sees_none(
    cli_env: str, capsys: pytest.CaptureFixture[str]
) -> None:
    assert main(["load-demo"]) == 1  # not in demo mode: the demo's published passwords would work here
    assert "refusing to load the demo outside demo mode" in capsys.readouterr().err
    assert main(["load-demo", "--with-demo-logins"]) == 0
    assert main(["load-demo", "--with-demo-logins"]) == 1  # refuses to load twice
    capsys.readouterr()
    main(["create-api-key", "--team", "Northfold Survey", "--scope", "read"])
    demo_key = capsys.readouterr().out.strip()
    main(["create-team", "Outsiders"])
    main(["create-api-key", "--team", "Outsiders", "--scope", "read"])
    other_key = capsys.readouterr().out.strip().splitlines()[-1]
    with TestClient(create_app(make_settings(cli_env))) as client:
        motors = client.get(
            "/api/v1/parts/motors?page_size=500", headers={"Authorization": f"Bearer {demo_key}"}
        ).json()
        assert motors["total"] >= 12
        other = client.get("/api/v1/parts/motors", headers={"Authorization": f"Bearer {other_key}"}).json()
        assert other["total"] == 0
        first_id = motors["items"][0]["id"]
        assert (
            client.get(f"/api/v1/parts/motors/{first_id}", headers={"Authorization": f"Bearer {other_key}"}).status_code
            == 404
        )


def test_serve_refuses_placeholder_secret(tmp_path: Path) -> None:
    env = {"PATH": "/usr/bin:/bin", "LIFTMATCH_DATABASE_URL": f"sqlite:///{tmp_path / 'x.db'}", "HOME": str(tmp_path)}
    result = subprocess.run(
        [sys.executable, "-m", "server.cli", "serve", "--port", "1"],
        env=env,
        cwd=tmp_path,
        capture_output=True,
        text=True,
        timeout=60,
    )
    assert result.returncode == 1
    assert "LIFTMATCH_SECRET_KEY is still the placeholder" in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1


def test_import_bench_and_calibrate(cli_env: str, capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    import json

    from tests.api.test_bench_runs import csv_of

    assert main(["load-demo", "--with-demo-logins"]) == 0
    capsys.readouterr()
    sweep = tmp_path / "sweep.csv"
    sweep.write_text(csv_of("m_a_p_1_v7p4"))
    assert main(["import-bench", str(sweep), "--motor", "1", "--propeller", "1", "--esc", "1",
                 "--supply-v", "7.4"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["run"]["sample_count"] > 5 and out["calibration"]["calibrations"]
    assert main(["calibrate", "motors:1"]) == 0
    assert json.loads(capsys.readouterr().out)["calibration"]["part_kind"] == "motors"
    bad = tmp_path / "bad.csv"
    bad.write_text("throttle,bus_voltage_v\n0.5,11\n")
    assert main(["import-bench", str(bad), "--motor", "1", "--propeller", "1", "--esc", "1", "--supply-v", "7"]) == 1
    assert "thrust_n" in capsys.readouterr().err
    # a published sweep recorded with the load cell reversed (bench-5in m_m_p_8_v11p1, PROVENANCE.md)
    reversed_sweep = tmp_path / "reversed.csv"
    reversed_sweep.write_text(csv_of("m_m_p_8_v11p1"))
    args = ["import-bench", str(reversed_sweep), "--motor", "1", "--propeller", "1", "--esc", "1", "--supply-v", "11.1"]
    assert main(args) == 1
    assert "load cell looks reversed" in capsys.readouterr().err
    assert main([*args, "--thrust-sign", "-1"]) == 0
    flipped = json.loads(capsys.readouterr().out)
    assert flipped["run"]["thrust_sign"] == -1 and flipped["calibration"]["calibrations"]
    with pytest.raises(SystemExit) as usage:
        main([*args, "--thrust-sign", "2"])
    assert usage.value.code == 2
    assert main(["calibrate", "12"]) == 1


def test_export_then_import_into_another_team(cli_env: str, capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    import json

    assert main(["load-demo", "--with-demo-logins"]) == 0
    target = tmp_path / "library.json"
    assert main(["export", "--team", "Northfold Survey", str(target)]) == 0
    main(["create-team", "Second site"])
    capsys.readouterr()
    assert main(["import", str(target), "--team", "Second site"]) == 0
    counts = json.loads(capsys.readouterr().out)
    assert counts["motors"] == len(json.loads(target.read_text())["parts"]["motors"]) >= 12
    (tmp_path / "broken.json").write_text("{")
    assert main(["import", str(tmp_path / "broken.json"), "--team", "Second site"]) == 1


def test_worker_refuses_the_embedded_database(cli_env: str, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["worker", "--concurrency", "2"]) == 1
    assert "needs PostgreSQL" in capsys.readouterr().err
