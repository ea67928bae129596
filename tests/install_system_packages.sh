#!/usr/bin/env bash
# Debian packages the test suite needs beyond pip: chromium for the real-browser
# dashboard test, poppler-utils (pdftotext/pdftoppm) to read the report back,
# postgresql (server binaries: the PostgreSQL store tests start a throw-away
# cluster from them, see tests/pg_server.py; the packaged cluster is not used).
# Installs only what is missing; needs root (or sudo) the first time.
set -eu
missing=""
command -v chromium >/dev/null 2>&1 || missing="$missing chromium"
command -v pdftotext >/dev/null 2>&1 || missing="$missing poppler-utils"
ls /usr/lib/postgresql/*/bin/initdb >/dev/null 2>&1 || command -v initdb >/dev/null 2>&1 \
  || missing="$missing postgresql"
if [ -z "$missing" ]; then
  echo "system packages: chromium, poppler-utils and postgresql already present"
  exit 0
fi
if [ "$(id -u)" -eq 0 ]; then as_root=""; else as_root="sudo"; fi
echo "system packages: installing$missing"
$as_root apt-get update -qq

DEBIAN_FRONTEND=noninteractive $as_root apt-get install -y -qq $missing >/dev/null
echo "system packages: installed$missing"
