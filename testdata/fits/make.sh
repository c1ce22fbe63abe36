#!/bin/sh
# Rebuilds the FITS fixtures with cfitsio (Debian: libcfitsio-dev) and checks each with
# fitsverify (Debian: fitsverify). Run from anywhere; writes next to this script.
set -eu
here=$(cd "$(dirname "$0")" && pwd)
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
cc -std=c99 -O1 -ffp-contract=off -Wall -Wextra -o "$tmp/make_fixtures" "$here/make_fixtures.c" -lcfitsio -lm
"$tmp/make_fixtures" "$here"
for f in lightcurve.fits lightcurve_late.fits utc.fits tables.fits; do
	fitsverify -q "$here/$f"
done
