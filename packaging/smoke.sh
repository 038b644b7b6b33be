#!/usr/bin/env bash
# Smoke test of the built one-folder app: --version and a headless passes run on the demo.
set -euo pipefail
app="${1:-dist/contactplan/contactplan}"
demo="${2:-resources/demo/week.toml}"
"$app" --version
out=$(mktemp -d)
"$app" passes "$demo" --out "$out/passes.csv"
n=$(($(wc -l < "$out/passes.csv") - 1))
test "$n" -gt 0 || { echo "smoke: no passes written"; exit 1; }
echo "smoke: ok ($n passes)"
