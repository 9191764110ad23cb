#!/usr/bin/env bash
# Build the project's virtual environment; called by `make setup`.
#
#   1. install the Debian libraries the gmsh wheel loads, if any are missing
#      (only as root or with password-less sudo);
#   2. create the venv if it is missing or has no working pip;
#   3. pip install -e '.[test]'.
#
# Quiet on success; on failure it prints the failing tool's output.
# Environment: PYTHON (default python3), VENV (default .venv).
set -euo pipefail
cd "$(dirname "${BASH_SOURCE[0]}")/.."

PYTHON="${PYTHON:-python3}"
VENV="${VENV:-.venv}"
# Shared libraries the gmsh PyPI wheel links against (Debian 12 package names).
GMSH_DEBS=(libglu1-mesa libgl1 libxcursor1 libxft2 libxinerama1 libgomp1)

log="$(mktemp)"
trap 'rm -f "$log"' EXIT

say() { printf 'setup: %s\n' "$*"; }
die() { printf 'setup: error: %s\n' "$*" >&2; exit 1; }

# Run a command with its output captured; show the output only if it fails.
quiet() {
    if ! "$@" >"$log" 2>&1; then
        cat "$log" >&2
        die "failed: $*"
    fi
}

# Prefix for commands that need root: empty as root, "sudo -n" if that works.
as_root() {
    if [ "$(id -u)" -eq 0 ]; then
        "$@"
    elif command -v sudo >/dev/null 2>&1 && sudo -n true 2>/dev/null; then
        sudo -n "$@"
    else
        return 77
    fi
}

can_be_root() {
    [ "$(id -u)" -eq 0 ] || { command -v sudo >/dev/null 2>&1 && sudo -n true 2>/dev/null; }
}

apt_updated=0
apt_install() {
    if [ "$apt_updated" -eq 0 ]; then
        quiet as_root env DEBIAN_FRONTEND=noninteractive apt-get update -qq
        apt_updated=1
    fi
    quiet as_root env DEBIAN_FRONTEND=noninteractive \
        apt-get install -y -qq --no-install-recommends "$@"
}

deb_missing() {
    local pkg missing=()
    for pkg in "$@"; do
        if ! dpkg-query -W -f='${Status}' "$pkg" 2>/dev/null | grep -q 'install ok installed'; then
            missing+=("$pkg")
        fi
    done
    # Print nothing at all when none is missing (mapfile would read one empty line).
    [ "${#missing[@]}" -eq 0 ] || printf '%s\n' "${missing[@]}"
}

# --- 1. system libraries for gmsh ------------------------------------------
if command -v dpkg-query >/dev/null 2>&1; then
    mapfile -t missing < <(deb_missing "${GMSH_DEBS[@]}")
    if [ "${#missing[@]}" -gt 0 ]; then
        if can_be_root; then
            say "installing system libraries for gmsh: ${missing[*]}"
            apt_install "${missing[@]}"
        else
            say "warning: missing system libraries for gmsh: ${missing[*]}" >&2
            say "warning: not root and no sudo; install them with apt-get to use gmsh" >&2
        fi
    fi
fi

# --- 2. virtual environment -------------------------------------------------
command -v "$PYTHON" >/dev/null 2>&1 || die "'$PYTHON' not found; install Python >= 3.11"
"$PYTHON" -c 'import sys; sys.exit(sys.version_info < (3, 11))' \
    || die "$("$PYTHON" -V 2>&1) is too old; Python >= 3.11 is required (set PYTHON=...)"

venv_ok() { [ -x "$VENV/bin/python" ] && "$VENV/bin/python" -m pip --version >/dev/null 2>&1; }

if ! venv_ok; then
    say "creating $VENV with $("$PYTHON" -V 2>&1)"
    # --clear: a venv left half-made by an earlier failure is rebuilt, not reused.
    if ! "$PYTHON" -m venv --clear "$VENV" >"$log" 2>&1; then
        # Debian splits ensurepip into python3-venv (python3.X-venv on some releases).
        if grep -qi 'ensurepip' "$log" && command -v apt-get >/dev/null 2>&1 && can_be_root; then
            pyver="$("$PYTHON" -c 'import sys; print(f"{sys.version_info[0]}.{sys.version_info[1]}")')"
            say "installing python3-venv (ensurepip is missing)"
            apt_install python3-venv
            if ! "$PYTHON" -m venv --clear "$VENV" >"$log" 2>&1; then
                apt_install "python${pyver}-venv"
                quiet "$PYTHON" -m venv --clear "$VENV"
            fi
        else
            cat "$log" >&2
            die "could not create $VENV (on Debian: apt-get install python3-venv)"
        fi
    fi
fi

# --- 3. the package and its test tools --------------------------------------
say "installing bearbound and its dependencies into $VENV (pip install -e '.[test]')"
quiet "$VENV/bin/python" -m pip install --disable-pip-version-check --no-input -q -e '.[test]'

# gmsh loads its shared libraries only on import; catch a missing one here, not mid-test.
if ! "$VENV/bin/python" -c 'import gmsh' >"$log" 2>&1; then
    cat "$log" >&2
    die "gmsh does not import; install the system libraries: apt-get install ${GMSH_DEBS[*]}"
fi
say "done"
