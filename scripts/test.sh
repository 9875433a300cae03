#!/usr/bin/env bash
# The whole test suite, from a fresh checkout: installs what it needs, then runs every test.
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/setup.sh
cargo test --workspace --all-targets
cargo test --workspace --doc
for example in soft_core_orbit photon_batch spin_sensitivity; do
    cargo run --quiet --example "$example"
done
