#!/usr/bin/env bash
# Static checks, as CI runs them: ruff (lint and format), mypy, the import-linter contracts.
#   bash scripts/check.sh            # everything
#   bash scripts/check.sh --no-ruff  # mypy and the contracts only (the pre-commit hook runs ruff itself)
# mypy and import-linter read a package from one folder, while the repository keeps engine/ and
# app/ at the top (installed as obligor_memo.engine and obligor_memo.app): both run on a copy of
# the sources laid out as installed.
set -euo pipefail
cd "$(dirname "$0")/.."
BIN=.venv/bin
if [[ "${1:-}" != "--no-ruff" ]]; then
  "$BIN/ruff" check .
  "$BIN/ruff" format --check .
fi
layout=$(mktemp -d)
trap 'rm -rf "$layout"' EXIT
mkdir -p "$layout/obligor_memo"
cp -r obligor_memo/. "$layout/obligor_memo/"
for folder in engine app templates sample_data; do
  cp -r "$folder" "$layout/obligor_memo/$folder"
done
cp pyproject.toml "$layout/"
here=$(pwd)
(cd "$layout" && PYTHONPATH="$layout" "$here/$BIN/mypy" --config-file pyproject.toml -p obligor_memo)
(cd "$layout" && PYTHONPATH="$layout" "$here/$BIN/lint-imports" pyproject.toml --no-cache)
echo "checks: ruff, mypy and import contracts clean"
