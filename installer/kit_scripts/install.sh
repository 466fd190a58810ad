#!/bin/sh
# Install Tamis for the current user from this kit, with no network access at all.
#
#   sh install.sh [--prefix DIR] [--python PYTHON] [--no-shortcuts]
#
# What it does, in order:
#   1. checks every file of the kit against SHA256SUMS;
#   2. creates a private Python environment in PREFIX/venv with the Python given (or found);
#   3. installs the wheels of this kit with pip --no-index (hash-checked; no server is contacted);
#   4. adds a launcher: Linux ~/.local/share/applications/tamis.desktop and ~/.local/bin/tamis,
#      macOS ~/Applications/Tamis.app (a small launcher) and ~/.local/bin/tamis;
#   5. writes PREFIX/install-manifest.txt and PREFIX/uninstall.sh.
# PREFIX defaults to ${XDG_DATA_HOME:-$HOME/.local/share}/tamis. No administrator rights needed.
set -eu

KIT=$(cd "$(dirname "$0")" && pwd)
DATA_HOME=${XDG_DATA_HOME:-$HOME/.local/share}
PREFIX="$DATA_HOME/tamis"
PYTHON=${TAMIS_PYTHON:-}
SHORTCUTS=1

while [ $# -gt 0 ]; do
  case "$1" in
    --prefix) PREFIX=$2; shift 2 ;;
    --prefix=*) PREFIX=${1#--prefix=}; shift ;;
    --python) PYTHON=$2; shift 2 ;;
    --python=*) PYTHON=${1#--python=}; shift ;;
    --no-shortcuts) SHORTCUTS=0; shift ;;
    -h|--help) sed -n '2,15p' "$0"; exit 0 ;;
    *) echo "install.sh: unknown option '$1' (see --help)" >&2; exit 2 ;;
  esac
done

say() { echo "tamis install: $*"; }
fail() { echo "tamis install: error: $*" >&2; exit 1; }

kit_value() { sed -n "s/^$1=//p" "$KIT/KIT_INFO"; }
WANT_PY=$(kit_value python_version)
VERSION=$(kit_value tamis_version)
KIT_PLATFORM=$(kit_value platform)

case "$(uname -s)" in
  Darwin) OS=macos ;;
  Linux) OS=linux ;;
  *) fail "this kit is for $KIT_PLATFORM; this machine runs $(uname -s)" ;;
esac
case "$KIT_PLATFORM" in
  "$OS"-*) ;;
  *) fail "this kit is for $KIT_PLATFORM; this machine runs $OS" ;;
esac

# 1. checksums
say "checking the kit against SHA256SUMS"
if command -v sha256sum >/dev/null 2>&1; then
  (cd "$KIT" && sha256sum --quiet -c SHA256SUMS) || fail "a file of the kit does not match SHA256SUMS; copy the kit again"
else
  (cd "$KIT" && shasum -a 256 --quiet -c SHA256SUMS) || fail "a file of the kit does not match SHA256SUMS; copy the kit again"
fi

# 2. a Python of the version the kit was built for
if [ -z "$PYTHON" ]; then
  for candidate in "python$WANT_PY" python3 python; do
    if command -v "$candidate" >/dev/null 2>&1; then
      have=$("$candidate" -c 'import sys; print("%d.%d" % sys.version_info[:2])' 2>/dev/null || true)
      if [ "$have" = "$WANT_PY" ]; then PYTHON=$(command -v "$candidate"); break; fi
    fi
  done
fi
[ -n "$PYTHON" ] || fail "Python $WANT_PY was not found; install it or pass --python /path/to/python$WANT_PY"
have=$("$PYTHON" -c 'import sys; print("%d.%d" % sys.version_info[:2])') || fail "'$PYTHON' does not run"
[ "$have" = "$WANT_PY" ] || fail "this kit holds wheels for Python $WANT_PY; '$PYTHON' is Python $have"

case "$PREFIX" in
  /*) ;;
  *) PREFIX="$(pwd)/$PREFIX" ;;
esac
if [ -e "$PREFIX" ] && [ ! -f "$PREFIX/install-manifest.txt" ] && [ -n "$(ls -A "$PREFIX" 2>/dev/null)" ]; then
  fail "'$PREFIX' exists and was not made by this installer; choose another --prefix"
fi
if [ -x "$PREFIX/uninstall.sh" ]; then
  say "removing the earlier installation in $PREFIX first"
  "$PREFIX/uninstall.sh" --quiet
fi

say "creating the environment in $PREFIX/venv (Python $have)"
mkdir -p "$PREFIX"
"$PYTHON" -m venv "$PREFIX/venv" || fail "could not create a virtual environment (Debian/Ubuntu: the python$WANT_PY-venv package is needed)"

# 3. offline, hash-checked install; PIP_CONFIG_FILE=/dev/null and --isolated keep any pip
#    configuration of the machine (an index, a proxy) out of it
say "installing $(ls "$KIT/wheels" | wc -l | tr -d ' ') wheels without network"
PIP_CONFIG_FILE=/dev/null "$PREFIX/venv/bin/python" -m pip --isolated install \
  --no-index --find-links "$KIT/wheels" --require-hashes --no-cache-dir \
  --disable-pip-version-check --quiet -r "$KIT/requirements.txt" \
  || fail "pip could not install the kit's wheels (see above); nothing outside $PREFIX was changed"

# 4. launchers
MANIFEST="$PREFIX/install-manifest.txt"
{
  echo "# Tamis $VERSION installed $(date -u +%Y-%m-%dT%H:%M:%SZ) from $KIT"
  echo "prefix=$PREFIX"
} > "$MANIFEST"
if [ "$SHORTCUTS" = 1 ]; then
  mkdir -p "$HOME/.local/bin"
  if [ ! -e "$HOME/.local/bin/tamis" ] || [ -L "$HOME/.local/bin/tamis" ]; then
    ln -sf "$PREFIX/venv/bin/tamis" "$HOME/.local/bin/tamis"
    echo "created=$HOME/.local/bin/tamis" >> "$MANIFEST"
  fi
  if [ "$OS" = linux ]; then
    apps="$DATA_HOME/applications"
    mkdir -p "$apps"
    cat > "$apps/tamis.desktop" <<DESKTOP
[Desktop Entry]
Type=Application
Name=Tamis
Comment=Choose the columns that matter in a workbook
Exec="$PREFIX/venv/bin/tamis-desktop" %f
Terminal=false
Icon=x-office-spreadsheet
Categories=Office;Spreadsheet;Science;
MimeType=application/vnd.openxmlformats-officedocument.spreadsheetml.sheet;application/vnd.ms-excel;text/csv;
DESKTOP
    echo "created=$apps/tamis.desktop" >> "$MANIFEST"
  else
    app="$HOME/Applications/Tamis.app"
    mkdir -p "$app/Contents/MacOS"
    cat > "$app/Contents/Info.plist" <<PLIST
<?xml version="1.0" encoding="UTF-8"?>
<!DOCTYPE plist PUBLIC "-//Apple//DTD PLIST 1.0//EN" "http://www.apple.com/DTDs/PropertyList-1.0.dtd">
<plist version="1.0"><dict>
  <key>CFBundleName</key><string>Tamis</string>
  <key>CFBundleIdentifier</key><string>org.tamis.launcher</string>
  <key>CFBundleVersion</key><string>$VERSION</string>
  <key>CFBundlePackageType</key><string>APPL</string>
  <key>CFBundleExecutable</key><string>Tamis</string>
</dict></plist>
PLIST
    printf '#!/bin/sh\nexec "%s/venv/bin/tamis-desktop" "$@"\n' "$PREFIX" > "$app/Contents/MacOS/Tamis"
    chmod 755 "$app/Contents/MacOS/Tamis"
    echo "created=$app" >> "$MANIFEST"
  fi
fi
cp "$KIT/uninstall.sh" "$PREFIX/uninstall.sh"
chmod 755 "$PREFIX/uninstall.sh"

"$PREFIX/venv/bin/tamis" --version >/dev/null || fail "the installed command does not start"
# the compiled fitting loop is made once here (kept inside the installation), not at the
# user's first large fit; if it cannot be made, fits use the interpreted loop and say so
say "preparing the compiled fitting loop (about 20 seconds, once)"
"$PREFIX/venv/bin/python" -c "from engine.fitting.coordinate import warm_compiled_path as w; w()" \
  || say "the compiled fitting loop could not be prepared now; the first large fit will try again"
say "done: Tamis $VERSION is in $PREFIX"
say "command line: $PREFIX/venv/bin/tamis (linked as ~/.local/bin/tamis unless --no-shortcuts)"
say "to remove it: $PREFIX/uninstall.sh"
