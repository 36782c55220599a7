#!/usr/bin/env bash
# Fetch Debian's linuxcnc-uspace (the RS274/NGC interpreter and its Python module `gcode`)
# and the libraries it needs into a cache folder, without installing them system-wide.
#
# usage: .ci/linuxcnc.sh [CACHE_DIR]     (default: <repo>/.cache/linuxcnc)
#
# Idempotent: nothing is done when the cache already holds the interpreter module.
# Always exits 0: when the packages cannot be fetched it says why, and the interpreter test
# (tests/gcode/test_linuxcnc.py) skips with that reason.
set -u

here="$(cd "$(dirname "$0")" && pwd)"
cache="${1:-$here/../.cache/linuxcnc}"
mkdir -p "$cache" || { echo "linuxcnc.sh: cannot create $cache"; exit 0; }
cache="$(cd "$cache" && pwd)"
debs="$cache/debs"
mkdir -p "$debs"

# Packages: the interpreter itself, then the shared libraries its gcode module links against
# that a plain Debian image lacks (checked with ldd on gcode.*.so, see docs/gcode.md).
packages=(linuxcnc-uspace libboost-python1.74.0)

find_module() {
    find "$cache/usr/lib/python3/dist-packages" -maxdepth 1 -name 'gcode*.so' 2>/dev/null | head -n 1
}

missing_libs() {
    local so="$1"
    LD_LIBRARY_PATH="$cache/usr/lib:$cache/usr/lib/x86_64-linux-gnu" ldd "$so" 2>/dev/null \
        | awk '/not found/ {print $1}'
}

if [ -n "$(find_module)" ] && [ -z "$(missing_libs "$(find_module)")" ]; then
    echo "linuxcnc.sh: interpreter already in $cache"
    exit 0
fi

if ! command -v apt-get >/dev/null 2>&1; then
    echo "linuxcnc.sh: apt-get not available; the interpreter check will be skipped"
    exit 0
fi

fetch() {
    # fetch PACKAGE: download the .deb into $debs (once) and unpack it into $cache
    local pkg="$1"
    local deb
    deb="$(ls "$debs"/"${pkg}"_*.deb 2>/dev/null | head -n 1)"
    if [ -z "$deb" ]; then
        if ! apt-cache show "$pkg" >/dev/null 2>&1; then
            if [ "$(id -u)" = "0" ]; then
                apt-get update -qq >/dev/null 2>&1 || true
            fi
        fi
        (cd "$debs" && apt-get download -qq "$pkg" >/dev/null 2>&1) || {
            echo "linuxcnc.sh: apt-get download $pkg failed (no package list or no network)"
            return 1
        }
        deb="$(ls "$debs"/"${pkg}"_*.deb 2>/dev/null | head -n 1)"
    fi
    [ -n "$deb" ] || { echo "linuxcnc.sh: no .deb for $pkg"; return 1; }
    dpkg -x "$deb" "$cache" || { echo "linuxcnc.sh: dpkg -x $deb failed"; return 1; }
    return 0
}

for pkg in "${packages[@]}"; do
    fetch "$pkg" || exit 0
done

so="$(find_module)"
if [ -z "$so" ]; then
    echo "linuxcnc.sh: linuxcnc-uspace unpacked but no gcode module found in $cache"
    exit 0
fi

# Any library still missing: ask dpkg which installed package would provide it is not
# possible (it is not installed), so look it up by file name in the package index.
for round in 1 2 3; do
    libs="$(missing_libs "$so")"
    [ -z "$libs" ] && break
    for lib in $libs; do
        pkg="$(apt-cache search --names-only "^$(echo "$lib" | sed -E 's/\.so\..*//; s/_/-/g; s/\+/\\+/g')" \
            2>/dev/null | awk '{print $1}' | grep -v -- '-dev$' | head -n 1)"
        if [ -z "$pkg" ]; then
            echo "linuxcnc.sh: no package found for missing library $lib"
            continue
        fi
        fetch "$pkg" || true
    done
done

libs="$(missing_libs "$so")"
if [ -n "$libs" ]; then
    echo "linuxcnc.sh: still missing libraries: $libs"
else
    echo "linuxcnc.sh: interpreter ready in $cache ($(basename "$so"))"
fi
exit 0
