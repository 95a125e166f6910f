#!/bin/sh
# install-config.sh: meson install script; copies the example configuration into place
# unless a configuration is already there (an installer's edits are never overwritten).
#   install-config.sh SOURCE TARGET     (TARGET absolute; $DESTDIR is put in front)
set -eu
src=$1
target="${DESTDIR:-}$2"
if [ -e "$target" ] || [ -L "$target" ]; then
  echo "install-config.sh: keeping the existing $target"
  exit 0
fi
mkdir -p "$(dirname "$target")"
# Readable by the daemon's dynamic user; written by root alone.
cp "$src" "$target.new.$$"
chmod 0644 "$target.new.$$"
mv "$target.new.$$" "$target"
echo "install-config.sh: installed $target"
