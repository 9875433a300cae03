#!/usr/bin/env bash
# Installs what the test suite needs on a fresh machine; safe to run again, quiet when all
# is there. Rust tests need only cargo. The checks of emitted code need gcc (C), python3 with
# NumPy, clang (CUDA to PTX without the toolkit), and the OpenCL headers, loader and the
# PoCL CPU driver; those tests fail, saying what is missing, when a tool is absent.
set -euo pipefail

need_apt=()
command -v gcc >/dev/null 2>&1 || need_apt+=(gcc)
command -v python3 >/dev/null 2>&1 || need_apt+=(python3 python3-pip)
command -v clang >/dev/null 2>&1 || need_apt+=(clang)
[ -e /usr/include/CL/cl.h ] || need_apt+=(opencl-headers)
ldconfig -p 2>/dev/null | grep -q 'libOpenCL\.so ' || need_apt+=(ocl-icd-opencl-dev)
ls /etc/OpenCL/vendors/pocl*.icd >/dev/null 2>&1 || need_apt+=(pocl-opencl-icd)

apt_updated=0
apt_install() {
    if ! command -v apt-get >/dev/null 2>&1; then
        echo "setup: please install: $*" >&2
        return 1
    fi
    if [ "$apt_updated" = 0 ]; then
        apt-get update -qq >/dev/null
        apt_updated=1
    fi
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends "$@" >/dev/null
}

if [ ${#need_apt[@]} -gt 0 ]; then
    apt_install "${need_apt[@]}" || echo "setup: could not install ${need_apt[*]}" >&2
fi
if ! python3 -c "import numpy" >/dev/null 2>&1; then
    # pip first (a user's Python); Debian's package where the system Python refuses pip.
    python3 -m pip install -q numpy >/dev/null 2>&1 || apt_install python3-numpy ||
        echo "setup: numpy could not be installed; the NumPy backend test will fail" >&2
fi
