#!/usr/bin/env bash
# Browser check of the HTML report: renders the demo report in a real,
# headless Chromium (Debian's package) to a screenshot and a PDF, dumps the
# DOM the browser built, and fails if a chart is missing, a section is
# empty, the page is blank or the page logged an error or tried to fetch
# anything, or if any element reaches past the page at 1024 px, at 1400 px
# or in A4 portrait print (scripts/browsercheck does the checking; the
# widths are measured through the DevTools protocol, engine/report/pagefit).
#
#   scripts/browser-check.sh [--install] [REPORT.html]
#
# Without REPORT.html it makes the demo report: `leadline demo` on a small
# ledger, the analysis commands this build has (scan, limits, ranges, dups),
# then `leadline report`. The browser is started without network access
# (every host name resolves to nothing, a dead proxy, background services
# off) and with a fresh profile. Outputs go to out/browser-check/ (ignored
# by git): report.html, report.png, report.pdf, dom.html and the logs.
#
# --install installs Debian's chromium when it is missing (apt-get, as
# root); when that is impossible (no apt, not root, no network to the
# mirrors) the check is skipped with a message and exit status 0, unless
# LEADLINE_REQUIRE_BROWSER=1, which makes a missing browser a failure.
# LEADLINE_CHECK_ROWS sets the demo's size (default 200000).
set -euo pipefail
cd "$(dirname "$0")/.."

install=0
report=""
for a in "$@"; do
  case "$a" in
    --install) install=1 ;;
    -h|--help) sed -n '2,24p' "$0"; exit 0 ;;
    *) report="$a" ;;
  esac
done

browser=""
find_browser() {
  for b in chromium chromium-browser; do
    if command -v "$b" >/dev/null 2>&1; then browser="$b"; return 0; fi
  done
  return 1
}

skip() {
  if [ "${LEADLINE_REQUIRE_BROWSER:-}" = 1 ]; then
    echo "browser check FAILED (LEADLINE_REQUIRE_BROWSER=1): $1" >&2
    exit 1
  fi
  echo "browser check SKIPPED: $1"
  exit 0
}

if ! find_browser; then
  if [ "$install" = 1 ]; then
    if command -v apt-get >/dev/null 2>&1 && [ "$(id -u)" = 0 ]; then
      echo "browser check: installing Debian's chromium ..."
      if ! { timeout 300 apt-get update -qq && DEBIAN_FRONTEND=noninteractive timeout 900 apt-get install -y -qq chromium; } >/tmp/leadline-chromium-install.log 2>&1; then
        skip "could not install chromium (no network to the Debian mirrors?); see /tmp/leadline-chromium-install.log"
      fi
      find_browser || skip "chromium installed but not found on PATH"
    else
      skip "chromium is not installed and cannot be installed here (needs apt-get as root)"
    fi
  else
    skip "chromium is not installed (apt-get install chromium, or run with --install)"
  fi
fi

out="out/browser-check"
rm -rf "$out"
mkdir -p "$out"
out="$(cd "$out" && pwd)"

if [ -z "$report" ]; then
  echo "browser check: building leadline and the demo report ..."
  go build -o "$out/leadline" ./cmd/leadline
  ll="$out/leadline"
  "$ll" demo --rows "${LEADLINE_CHECK_ROWS:-200000}" --out "$out/demo" >"$out/demo.log" 2>&1
  db="$out/demo/demo.duckdb"
  existing="$(find "$out/demo" -name report.html -print -quit)"
  if [ -n "$existing" ]; then
    report="$existing"
  else
    commands="$("$ll" help)"
    for c in scan limits ranges dups; do
      if grep -qE "^  $c " <<<"$commands"; then
        "$ll" "$c" --db "$db" >"$out/$c.log" 2>&1 || { echo "browser check: leadline $c failed:"; cat "$out/$c.log"; exit 1; }
      fi
    done
    "$ll" report --db "$db" --out "$out/report.html" >/dev/null
    report="$out/report.html"
  fi
fi
if [ "$report" != "$out/report.html" ]; then
  cp "$report" "$out/report.html"
fi
url="file://$out/report.html"

# A fresh profile per run; no network: host names resolve to nothing and
# any connection would go to a dead proxy.
run_browser() {
  local name="$1"; shift
  local profile
  profile="$(mktemp -d)"
  local rc=0
  timeout 180 "$browser" --headless --no-sandbox --disable-gpu --no-first-run \
    --disable-background-networking --disable-component-update --disable-sync --disable-quic \
    --disable-extensions --disable-default-apps --no-default-browser-check --metrics-recording-only \
    --host-resolver-rules="MAP * ~NOTFOUND" --proxy-server="127.0.0.1:9" --proxy-bypass-list="<-loopback>" \
    --user-data-dir="$profile" --enable-logging=stderr --v=0 --hide-scrollbars \
    "$@" "$url" 2>"$out/$name.log" || rc=$?
  rm -rf "$profile"
  if [ "$rc" != 0 ]; then
    echo "browser check FAILED: chromium ($name) exited with status $rc; the end of its log:" >&2
    tail -5 "$out/$name.log" >&2
    exit 1
  fi
}

echo "browser check: rendering with $("$browser" --version 2>/dev/null | tail -1) ..."
run_browser dom --dump-dom >"$out/dom.html"
run_browser png --window-size=1280,16000 --screenshot="$out/report.png" >/dev/null
run_browser pdf --no-pdf-header-footer --print-to-pdf="$out/report.pdf" >/dev/null

go run ./scripts/browsercheck --dom "$out/dom.html" --png "$out/report.png" --pdf "$out/report.pdf" \
  --log "$out/dom.log,$out/png.log,$out/pdf.log" --fit "$out/report.html" --browser "$(command -v "$browser")"
echo "browser check passed: $out/report.png, $out/report.pdf"
