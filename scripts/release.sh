#!/usr/bin/env bash
# Build allot release archives: static binaries (CGO_ENABLED=0) for
# linux, macOS and windows on amd64 and arm64, each with the LICENSE, the
# README and the man pages, plus SHA256SUMS over the archives.
#
#   scripts/release.sh v0.2.0                       # every target, into dist/v0.2.0
#   scripts/release.sh v0.2.0 linux/amd64 darwin/arm64   # only these
#   OUT=/tmp/rel scripts/release.sh v0.2.0
#
# The version is stamped into the binary (allot --version) with -ldflags;
# -trimpath and SOURCE_DATE_EPOCH (the commit's time) make the build
# reproducible from the same commit. Run it from a clean checkout of the tag.
set -euo pipefail
cd "$(dirname "$0")/.."

version="${1:?usage: scripts/release.sh VERSION [GOOS/GOARCH ...] (for example v0.2.0)}"
shift
case "$version" in
  v[0-9]*) ;;
  *) echo "release.sh: version $version must look like v0.2.0" >&2; exit 2 ;;
esac
targets=("$@")
if [ ${#targets[@]} -eq 0 ]; then
  targets=(linux/amd64 linux/arm64 darwin/amd64 darwin/arm64 windows/amd64 windows/arm64)
fi
out="${OUT:-dist/$version}"
if [ -e "$out" ] && [ -n "$(ls -A "$out" 2>/dev/null)" ]; then
  echo "release.sh: $out is not empty; remove it or set OUT" >&2; exit 2
fi
mkdir -p "$out"
if [ -n "$(git status --porcelain 2>/dev/null)" ]; then
  echo "release.sh: warning: the working tree has uncommitted changes; the binaries will say -dirty" >&2
fi
export SOURCE_DATE_EPOCH="${SOURCE_DATE_EPOCH:-$(git log -1 --format=%ct 2>/dev/null || date +%s)}"

work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT

# Man pages from the command tree, the same for every target.
go run ./cmd/allot docs man "$work/man" >/dev/null 2>&1

commit="$(git rev-parse HEAD 2>/dev/null || true)"
ldflags="-s -w -X github.com/allotproject/allot/internal/version.stamp=$version -X github.com/allotproject/allot/internal/version.commit=$commit"
for target in "${targets[@]}"; do
  goos="${target%/*}"; goarch="${target#*/}"
  name="allot-$version-$goos-$goarch"
  dir="$work/$name"
  mkdir -p "$dir"
  exe=allot
  [ "$goos" = windows ] && exe=allot.exe
  echo "== $target"
  CGO_ENABLED=0 GOOS="$goos" GOARCH="$goarch" go build -trimpath -ldflags "$ldflags" -o "$dir/$exe" ./cmd/allot
  cp LICENSE README.md "$dir/"
  cp -r "$work/man" "$dir/man"
  # Archives with fixed owners, order and times, so that they are reproducible.
  if [ "$goos" = windows ]; then
    (cd "$work" && find "$name" -exec touch -d "@$SOURCE_DATE_EPOCH" {} + &&
      find "$name" -type f | LC_ALL=C sort | zip -q -X -@ "$name.zip")
    mv "$work/$name.zip" "$out/"
  else
    tar --sort=name --owner=0 --group=0 --numeric-owner --mtime="@$SOURCE_DATE_EPOCH" \
      -C "$work" -cf - "$name" | gzip -n > "$out/$name.tar.gz"
  fi
done

(cd "$out" && sha256sum allot-* > SHA256SUMS)
echo "== $out"
cat "$out/SHA256SUMS"
