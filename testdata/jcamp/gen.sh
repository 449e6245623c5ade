#!/bin/sh
# Regenerates the JCAMP-DX fixtures and reference arrays in this folder.
# Needs node and npm; installs the pinned packages in a scratch folder under
# /tmp (never in the repository). The Go tests only read the stored files.
set -eu
here=$(cd "$(dirname "$0")" && pwd)
work=$(mktemp -d /tmp/jcamp-gen.XXXXXX)
cd "$work"
npm init -y >/dev/null
npm install --no-audit --no-fund jcampconverter@12.5.3 convert-to-jcamp@7.0.1 >/dev/null
cp "$here/gen.mjs" "$work/gen.mjs"
node gen.mjs "$here"
rm -rf "$work"
