#!/usr/bin/env bash
# The whole test suite from a fresh machine: dependencies, build, ctest.
set -euo pipefail
cd "$(dirname "$0")/.."
bash tools/install-deps.sh
bash tools/build.sh
ctest --test-dir build --output-on-failure -j"$(nproc)" --timeout 600
