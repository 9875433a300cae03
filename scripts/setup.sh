#!/usr/bin/env bash
# Installs what the test suite needs on a fresh machine; safe to run again.
# Rust tests need only cargo. The emitted-code checks need a C compiler and python3 with
# NumPy; they are installed here when missing.
set -euo pipefail

need_apt=()
command -v gcc >/dev/null 2>&1 || need_apt+=(gcc)
command -v python3 >/dev/null 2>&1 || need_apt+=(python3 python3-pip)
if [ ${#need_apt[@]} -gt 0 ]; then
    if command -v apt-get >/dev/null 2>&1; then
        apt-get update -qq && apt-get install -y -qq "${need_apt[@]}" >/dev/null
    else
        echo "setup: please install: ${need_apt[*]}" >&2
    fi
fi
if ! python3 -c "import numpy" >/dev/null 2>&1; then
    python3 -m pip install -q numpy >/dev/null 2>&1 || echo "setup: numpy not installed; NumPy backend checks will be skipped" >&2
fi
