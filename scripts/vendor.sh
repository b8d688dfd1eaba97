#!/usr/bin/env bash
# Re-vendor the front-end files from the npm registry (pinned versions) with their licences.
set -euo pipefail
cd "$(dirname "$0")/.."
dest=web/static/vendor; mkdir -p "$dest"
tmp=$(mktemp -d); trap 'rm -rf "$tmp"' EXIT
: > "$tmp/manifest"
vendor() {  # vendor <pkg> <version> <license-file> <file-in-package>...
  local pkg=$1 ver=$2 lic=$3; shift 3
  local tgz; tgz=$(cd "$tmp" && npm pack --silent "$pkg@$ver")
  mkdir -p "$tmp/$pkg" && tar -xzf "$tmp/$tgz" -C "$tmp/$pkg"
  for f in "$@"; do install -m 0644 "$tmp/$pkg/package/$f" "$dest/"; echo "$pkg@$ver $f" >> "$tmp/manifest"; done
  install -m 0644 "$tmp/$pkg/package/$lic" "$dest/LICENSE.$pkg.txt"
}
vendor htmx.org 2.0.11 LICENSE    dist/htmx.min.js
vendor chart.js 4.6.1  LICENSE.md dist/chart.umd.min.js
vendor swagger-ui-dist 5.35.0 LICENSE swagger-ui-bundle.js swagger-ui.css
{ cat "$tmp/manifest"; (cd "$dest" && sha256sum -- *.js *.css); } > "$dest/MANIFEST.txt"
