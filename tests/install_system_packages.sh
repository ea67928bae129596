#!/usr/bin/env bash
# Debian packages the test suite needs beyond pip: chromium for the real-browser
# dashboard test, poppler-utils (pdftotext/pdftoppm) to read the report back.
# Installs only what is missing; needs root (or sudo) the first time.
set -eu
missing=""
command -v chromium >/dev/null 2>&1 || missing="$missing chromium"
command -v pdftotext >/dev/null 2>&1 || missing="$missing poppler-utils"
if [ -z "$missing" ]; then
  echo "system packages: chromium and poppler-utils already present"
  exit 0
fi
if [ "$(id -u)" -eq 0 ]; then as_root=""; else as_root="sudo"; fi
echo "system packages: installing$missing"
$as_root apt-get update -qq
DEBIAN_FRONTEND=noninteractive $as_root apt-get install -y -qq $missing >/dev/null
echo "system packages: installed$missing"
