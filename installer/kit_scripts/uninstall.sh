#!/bin/sh
# Remove Tamis installed by install.sh: the environment, the launchers listed in
# install-manifest.txt, and this folder. Workbooks are never touched. The settings file in the
# user's configuration folder stays unless --settings is given.
#
#   sh uninstall.sh [--settings] [--quiet]
set -eu

PREFIX=$(cd "$(dirname "$0")" && pwd)
SETTINGS=0
QUIET=0
for arg in "$@"; do
  case "$arg" in
    --settings) SETTINGS=1 ;;
    --quiet) QUIET=1 ;;
    -h|--help) sed -n '2,7p' "$0"; exit 0 ;;
    *) echo "uninstall.sh: unknown option '$arg'" >&2; exit 2 ;;
  esac
done
say() { [ "$QUIET" = 1 ] || echo "tamis uninstall: $*"; }

MANIFEST="$PREFIX/install-manifest.txt"
if [ ! -f "$MANIFEST" ] || [ ! -d "$PREFIX/venv" ]; then
  echo "tamis uninstall: error: '$PREFIX' does not look like a Tamis installation (no install-manifest.txt); nothing removed" >&2
  exit 1
fi

sed -n 's/^created=//p' "$MANIFEST" | while IFS= read -r made; do
  if [ -L "$made" ] || [ -f "$made" ]; then
    rm -f "$made" && say "removed $made"
  elif [ -d "$made" ]; then
    rm -rf "$made" && say "removed $made"
  fi
done

if [ "$SETTINGS" = 1 ]; then
  case "$(uname -s)" in
    Darwin) conf="$HOME/Library/Application Support/tamis" ;;
    *) conf="${XDG_CONFIG_HOME:-$HOME/.config}/tamis" ;;
  esac
  [ -n "${TAMIS_CONFIG_DIR:-}" ] && conf=$TAMIS_CONFIG_DIR
  if [ -d "$conf" ]; then rm -rf "$conf" && say "removed settings $conf"; fi
fi

cd /
rm -rf "$PREFIX"
say "removed $PREFIX"
