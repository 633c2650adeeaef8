#!/usr/bin/env bash
# Regenerate the sample plots into a directory (default: a new temporary one).
# Usage: bash test/plot/make-samples.sh [out-dir]
set -euo pipefail
cd "$(dirname "$0")/../.."
build="$(mktemp -d)"
npx tsc --ignoreConfig --module nodenext --moduleResolution nodenext --target es2022 --types node --strict \
  --skipLibCheck --outDir "$build" test/plot/make-samples.ts
node "$build/test/plot/make-samples.js" "$@"
rm -rf "$build"
