#!/usr/bin/env bash
# Install everything the tests need (Python venv + extras) and run the whole suite. `.ci/run` calls this.
set -euo pipefail
cd "$(dirname "$0")/.."
export PIP_DISABLE_PIP_VERSION_CHECK=1 DEBIAN_FRONTEND=noninteractive
# Debian's Chromium for the real-browser tests (Playwright drives it; no browser download) and PostgreSQL.
pkgs=()
[ -x /usr/bin/chromium ] || pkgs+=(chromium fonts-dejavu-core)
ls -d /usr/lib/postgresql/*/bin >/dev/null 2>&1 || pkgs+=(postgresql)
if [ ${#pkgs[@]} -gt 0 ]; then
  if [ "$(id -u)" = 0 ]; then
    apt-get update -q >/dev/null && apt-get install -y -q --no-install-recommends "${pkgs[@]}" >/dev/null
  else
    echo "missing ${pkgs[*]}: install them with apt-get (those tests will be skipped)" >&2
  fi
fi
[ -x .venv/bin/python ] || python3 -m venv .venv
.venv/bin/python -m pip install -q --upgrade pip 2> >(grep -v "WARNING: Location" >&2)
.venv/bin/python -m pip install -q -e '.[test,postgres]' 2> >(grep -v "WARNING: Location" >&2)
.venv/bin/python -m ruff check .
.venv/bin/python -m mypy server
if ls -d /usr/lib/postgresql/*/bin >/dev/null 2>&1; then
  eval "$(scripts/pg-ci.sh start)"
  trap 'scripts/pg-ci.sh stop' EXIT
fi
.venv/bin/python -m pytest -q -p no:cacheprovider "$@"
