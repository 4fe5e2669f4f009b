#!/usr/bin/env bash
# Install obligor-memo into ./.venv, with the system packages it needs.
#   bash scripts/install.sh          # the application
#   bash scripts/install.sh --test   # the application and the test tools
# System packages (Debian/Ubuntu): Pango for the PDF (WeasyPrint), Chromium for chart export
# (kaleido) and the browser tests, librsvg2-bin (rsvg-convert) to turn the chart SVGs into PDF
# pages quickly, poppler-utils for reading PDFs back in the tests.
set -euo pipefail
cd "$(dirname "$0")/.."

EXTRA=""
if [[ "${1:-}" == "--test" ]]; then EXTRA="[test]"; fi

SYSTEM_PACKAGES=(chromium librsvg2-bin poppler-utils libpango-1.0-0 libpangoft2-1.0-0 fonts-dejavu-core)

missing=()
for pkg in "${SYSTEM_PACKAGES[@]}"; do
  dpkg-query -W -f='${Status}' "$pkg" 2>/dev/null | grep -q "install ok installed" || missing+=("$pkg")
done
if (( ${#missing[@]} )); then
  if command -v apt-get >/dev/null; then
    SUDO=""
    if [[ $(id -u) -ne 0 ]]; then SUDO="sudo"; fi
    echo "Installing system packages: ${missing[*]}"
    $SUDO apt-get update -qq
    DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq "${missing[@]}" >/dev/null
  else
    echo "Please install these system packages yourself: ${missing[*]}" >&2
  fi
fi

PYTHON="${PYTHON:-python3}"
"$PYTHON" -c 'import sys; sys.exit(0 if sys.version_info >= (3, 11) else 1)' || {
  echo "obligor-memo needs Python 3.11 or newer; $PYTHON is $("$PYTHON" --version 2>&1)." >&2; exit 1; }
if [[ ! -x .venv/bin/python ]]; then
  "$PYTHON" -m venv .venv
fi
.venv/bin/python -m pip install --quiet --upgrade pip
.venv/bin/python -m pip install --quiet -e ".${EXTRA}"
echo "obligor-memo installed in $(pwd)/.venv"
