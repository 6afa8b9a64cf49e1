#!/bin/sh
# demo.sh - the whole job on the demo lab; figures land in out/demo/.
# Until the demo lab exists this inspects a bundled example file.
set -e
FF=${1:-build/frostfit}
ROOT=$(cd "$(dirname "$0")/.." && pwd)
mkdir -p "$ROOT/out/demo"
"$FF" inspect "$ROOT/tests/data/import/logger_semicolon_comma.csv"
