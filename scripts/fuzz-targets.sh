#!/usr/bin/env bash
# Lists every fuzz target of the module as PACKAGE:FUNCTION.
set -euo pipefail
cd "$(dirname "$0")/.."
grep -rlE '^func Fuzz[A-Za-z0-9_]+\(f \*testing\.F\)' --include='*_test.go' . | sort | while read -r f; do
  pkg="./$(dirname "${f#./}")"
  grep -oE '^func Fuzz[A-Za-z0-9_]+' "$f" | sed 's/^func //' | while read -r fn; do
    echo "$pkg:$fn"
  done
done
