"""The docs mention every setting, CLI command and API route (a new one fails until it is documented)."""

from __future__ import annotations

import os
import re
from pathlib import Path

from server.cli import build_parser
from server.config import REPO_ROOT, Settings
from server.main import create_app
from tests.conftest import make_settings

DOCS = (REPO_ROOT / "README.md").read_text() + (REPO_ROOT / "DEVELOPERS.md").read_text()


def test_every_setting_is_documented() -> None:
    for name in Settings.model_fields:
        env = f"LIFTMATCH_{name.upper()}"
        short = "_" + name.upper().split("_", 1)[1] if name.startswith("password_") else env
        assert env in DOCS or short in DOCS, env


def test_every_cli_command_is_documented() -> None:
    parser = build_parser()
    commands = next(a for a in parser._actions if a.dest == "command").choices
    for name in commands:
        assert f"liftmatch {name}" in DOCS, name


def test_every_api_route_is_documented(tmp_path) -> None:  # type: ignore[no-untyped-def]
    app = create_app(make_settings(f"sqlite:///{tmp_path / 'x.db'}"))
    for path in app.openapi()["paths"]:
        short = path.removeprefix("/api/v1")
        short = re.sub(r"/parts/(batteries|escs|motors|propellers)", "/parts/{kind}", short)
        short = re.sub(r"\{\w+_id\}", "{id}", short)
        assert re.search(re.escape(short) + r"[`,? ]", DOCS), short


# --- the model reference (docs/model-reference.md) ---------------------------------------------------------

MODEL_REFERENCE = REPO_ROOT / "docs" / "model-reference.md"
CITING = ("server", "tests", "benchmarks", "scripts", "seed_data", "web", "migrations", "README.md", "DEVELOPERS.md")
"""Where code, tests and docs may cite check cases or sections of the model reference."""
SKIP_DIRS = {".git", ".venv", "var", "test-output", ".hypothesis", "__pycache__", "node_modules", ".mypy_cache",
             ".ruff_cache", ".pytest_cache", "build", "dist",
             "vendor"}  # third-party front-end files shipped unchanged (web/static/vendor): they cite nothing of ours
TEXT_SUFFIXES = {".py", ".md", ".html", ".txt", ".toml", ".sh", ".cfg", ".ini", ".yml", ".yaml", ".json", ".js",
                 ".css", ".csv", ".mako"}
NOT_CHECK_CASES = {"SHA", "UTF", "NS"}
"""Upper-case ``XX-n`` tokens that are not check-case ids: SHA-256, UTF-8, invented part numbers (NS-1) in test CSV."""
CHECK_ID = re.compile(r"\b([A-Z]{2,5})-(\d+)(?:\.\.(\d+))?\b")


def _text_files(*roots: str) -> list[tuple[str, str]]:
    """(path relative to the repository, text) of the text files under ``roots``; caches, builds and any virtual
    environment (a directory holding ``pyvenv.cfg``) are left out."""
    out = []
    for root in roots:
        path = REPO_ROOT / root
        if path.is_file():
            found = [path]
        else:
            found = []
            for folder, dirs, files in os.walk(path):
                dirs[:] = sorted(d for d in dirs if d not in SKIP_DIRS and not d.endswith(".egg-info")
                                 and not (Path(folder) / d / "pyvenv.cfg").exists())
                found += [Path(folder) / f for f in sorted(files)]
        for p in found:
            if p.suffix in TEXT_SUFFIXES:
                out.append((str(p.relative_to(REPO_ROOT)), p.read_text(encoding="utf-8", errors="replace")))
    return out


def _slug(heading: str) -> str:
    """GitHub's anchor for a Markdown heading: lower case, punctuation dropped, spaces to hyphens."""
    return re.sub(r"[^\w\- ]", "", heading.strip().lower()).replace(" ", "-")


def _defined_check_cases() -> set[str]:
    """Ids that have their own row in a check-case table of the model reference."""
    return set(re.findall(r"^\| ([A-Z]{2,5}-\d+) \|", MODEL_REFERENCE.read_text(), flags=re.MULTILINE))


def test_every_cited_check_case_is_defined_in_the_model_reference() -> None:
    defined = _defined_check_cases()
    prefixes = {d.split("-")[0] for d in defined}
    assert {"ATM", "PROP", "MOT", "OP", "ESC", "BAT", "RULE"} <= prefixes
    missing: list[str] = []
    for name, text in _text_files(*CITING):
        for prefix, first, last in CHECK_ID.findall(text):
            if prefix in NOT_CHECK_CASES:
                continue
            # "ATM-1..11" cites ATM-1 to ATM-11
            for number in range(int(first), int(last or first) + 1):
                if f"{prefix}-{number}" not in defined:
                    missing.append(f"{name}: {prefix}-{number}")
    assert not missing, ("check cases cited but not defined in docs/model-reference.md (add a row to its check-case "
                         "table, or add a non-id token to NOT_CHECK_CASES): " + ", ".join(sorted(set(missing))))



def _check_case_rows() -> list[tuple[str, str]]:
    """(id, expected-values column) of every check-case row of the model reference."""
    rows = re.findall(r"^\| ([A-Z]{2,5}-\d+) \| .*? \| (.*?) \| .*? \| .*? \|$", MODEL_REFERENCE.read_text(),
                      flags=re.MULTILINE)
    return [(cid, expected) for cid, expected in rows]


def test_every_defined_check_case_is_asserted_by_a_test() -> None:
    cited = {f"{p}-{n}" for _, text in _text_files("tests") for p, first, last in CHECK_ID.findall(text)
             for n in range(int(first), int(last or first) + 1)}
    unasserted = sorted(_defined_check_cases() - cited)
    assert not unasserted, f"check cases in docs/model-reference.md that no test cites: {unasserted}"


def test_check_case_values_are_numbers_the_tests_assert() -> None:
    # Every decimal number of a row's "expected" column must appear in a test file (thousands separated by a
    # space there, by "_" or nothing in Python); a value nobody asserts does not belong in a check case.
    def numbers(text: str) -> set[str]:
        joined = re.sub(r"(?<=\d)[ _](?=\d{3}\b)", "", text)
        return set(re.findall(r"\d+\.\d+(?:e-?\d+)?|\d+e-?\d+", joined))

    asserted = numbers("\n".join(text for _, text in _text_files("tests")))
    rows = _check_case_rows()
    assert len(rows) == len(_defined_check_cases()) >= 49  # every row parsed (ATM, PROP, MOT, OP, ESC, BAT, RULE)
    stray = [f"{cid}: {n}" for cid, expected in rows for n in sorted(numbers(expected) - asserted)]
    assert not stray, f"values in docs/model-reference.md check cases that no test asserts: {stray}"

def test_every_model_reference_anchor_exists() -> None:
    doc = MODEL_REFERENCE.read_text()
    headings = {_slug(h) for h in re.findall(r"^#{1,6} (.+)$", doc, flags=re.MULTILINE)}
    assert len(headings) == len(re.findall(r"^#{1,6} ", doc, flags=re.MULTILINE)), "two headings share an anchor"
    broken = [f"docs/model-reference.md: #{a}" for a in re.findall(r"\]\(#([\w-]+)\)", doc) if a not in headings]
    for name, text in _text_files(*CITING):
        broken += [f"{name}: #{a}" for a in re.findall(r"model-reference\.md#([\w-]+)", text) if a not in headings]
    assert not broken, "links to sections of docs/model-reference.md that do not exist: " + ", ".join(broken)


def test_nothing_points_to_a_model_document_outside_the_repository() -> None:
    outside = "physics" + ".md"  # spelled in two parts so that this file does not match itself
    roots = [p.name for p in REPO_ROOT.iterdir() if p.name not in SKIP_DIRS]
    hits = [name for name, text in _text_files(*roots) if outside in text]
    assert not hits, f"these files refer to {outside}, which is not in the repository: {hits}; cite the model reference"
