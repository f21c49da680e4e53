#!/usr/bin/env bash
# Fetch openly licensed recorded speech for the finder tests into tests/data/speech/.
#
# Source: two Debian (bookworm) packages, fetched with apt-get download and unpacked with
# dpkg-deb -x (nothing is installed):
#   alsa-utils 1.2.8-1            /usr/share/sounds/alsa/*.wav      48 kHz mono, GPL-2
#   ktuberling-data 4:22.12.3-1   /usr/share/ktuberling/sounds/en/*.ogg  44.1 kHz, GPL-2+
# The files kept are those listed in tests/data/SHA256SUMS; each is checked against it.
# SOURCES.md (origin and licence of each file) and the packages' copyright files are
# written beside them.
#
# Idempotent: does nothing when every file is present and matches. Where apt-get or
# dpkg-deb is missing or the download fails, it says so and exits 0 (the speech tests then
# skip with a message). A checksum mismatch exits 1 and installs nothing.
set -euo pipefail

here="$(cd "$(dirname "$0")" && pwd)"
dest="$here/speech"
sums="$here/SHA256SUMS"
packages=(alsa-utils=1.2.8-1 ktuberling-data=4:22.12.3-1)

if [ -d "$dest" ] && (cd "$dest" && sha256sum --quiet --strict -c "$sums") >/dev/null 2>&1; then
    echo "fetch_speech: speech data present and checked ($dest)"
    exit 0
fi
for tool in apt-get dpkg-deb sha256sum; do
    if ! command -v "$tool" >/dev/null 2>&1; then
        echo "fetch_speech: $tool is not available; skipped (the speech tests will skip)"
        exit 0
    fi
done

work="$(mktemp -d)"
staging="$dest.part.$$"
trap 'rm -rf "$work" "$staging"' EXIT
if ! (cd "$work" && apt-get download "${packages[@]}" >/dev/null 2>&1); then
    echo "fetch_speech: could not download ${packages[*]} (no network or no package lists); skipped"
    exit 0
fi
for deb in "$work"/*.deb; do
    dpkg-deb -x "$deb" "$work/root"
done

mkdir -p "$staging"
alsa="$work/root/usr/share/sounds/alsa"
tuberling="$work/root/usr/share/ktuberling/sounds/en"
{
    echo "# Recorded speech used by the finder tests"
    echo
    echo "Fetched by tests/data/fetch_speech.sh from Debian bookworm packages (apt-get download,"
    echo "dpkg-deb -x). Checked against tests/data/SHA256SUMS. Not part of emulate's sources."
    echo
    echo "| file | package | path in the package | licence |"
    echo "| --- | --- | --- | --- |"
} > "$staging/SOURCES.md"
while read -r _ name; do
    if [ -f "$alsa/$name" ]; then
        cp "$alsa/$name" "$staging/"
        echo "| $name | alsa-utils 1.2.8-1 | /usr/share/sounds/alsa/$name | GPL-2 |" >> "$staging/SOURCES.md"
    elif [ -f "$tuberling/$name" ]; then
        cp "$tuberling/$name" "$staging/"
        echo "| $name | ktuberling-data 4:22.12.3-1 | /usr/share/ktuberling/sounds/en/$name | GPL-2+ |" \
            >> "$staging/SOURCES.md"
    fi
done < "$sums"
{
    echo
    echo "Licences: see copyright-alsa-utils and copyright-ktuberling-data beside this file (the"
    echo "packages' debian/copyright; \"Files: *\" is GPL-2 for alsa-utils and GPL-2+ for"
    echo "ktuberling-data)."
} >> "$staging/SOURCES.md"
cp "$work/root/usr/share/doc/alsa-utils/copyright" "$staging/copyright-alsa-utils"
cp "$work/root/usr/share/doc/ktuberling-data/copyright" "$staging/copyright-ktuberling-data"

if ! (cd "$staging" && sha256sum --quiet --strict -c "$sums"); then
    echo "fetch_speech: checksums do not match tests/data/SHA256SUMS; nothing installed" >&2
    exit 1
fi
rm -rf "$dest"
mv "$staging" "$dest"
echo "fetch_speech: $(wc -l < "$sums") files in $dest"
