#!/usr/bin/env bash
# Installs what quarterline needs on a Debian-like machine: the npm
# dependencies (from package-lock.json) and, when asked with --browser, the
# system Chromium and Poppler used to print and check PDFs. Says what it does.
set -euo pipefail
cd "$(dirname "$0")/.."

want_browser=0
for arg in "$@"; do
  case "$arg" in
    --browser) want_browser=1 ;;
    *) echo "setup.sh: unknown option $arg" >&2; exit 2 ;;
  esac
done

if [ ! -d node_modules ] || [ package-lock.json -nt node_modules/.package-lock.json ]; then
  echo "setup: installing npm dependencies (npm ci)"
  npm ci --no-audit --no-fund --loglevel=error
fi

if [ "$want_browser" = 1 ]; then
  missing=()
  if [ -z "${QUARTERLINE_CHROMIUM:-}" ] && ! command -v chromium >/dev/null 2>&1 && ! command -v chromium-browser >/dev/null 2>&1 && ! command -v google-chrome >/dev/null 2>&1; then
    missing+=(chromium)
  fi
  command -v pdftotext >/dev/null 2>&1 || missing+=(poppler-utils)
  command -v openssl >/dev/null 2>&1 || missing+=(openssl)
  if [ ${#missing[@]} -gt 0 ]; then
    if command -v apt-get >/dev/null 2>&1; then
      sudo_cmd=""
      [ "$(id -u)" = 0 ] || sudo_cmd="sudo"
      echo "setup: installing ${missing[*]} from Debian's packages (apt-get); this takes about a minute"
      $sudo_cmd apt-get update -qq
      DEBIAN_FRONTEND=noninteractive $sudo_cmd apt-get install -y -qq "${missing[@]}" >/dev/null
    else
      echo "setup: ${missing[*]} missing and apt-get is not available; install Chromium and Poppler yourself, or set QUARTERLINE_CHROMIUM to a Chromium binary" >&2
      exit 1
    fi
  fi
fi
