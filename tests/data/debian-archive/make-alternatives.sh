#!/usr/bin/env bash
# Regenerates alternatives.tsv: for every package a verified debian entry of
# src/native/catalog.yaml lists as standing in for its `dev` package, the evidence from
# Debian's archive that it does.
#
#   pulled_in_by  must depend on `dev` outright (not as one choice of `a | b`), read with
#                 `apt-cache show`: evidence `depends`;
#   alternatives  must ship, in its own file list (`apt-get download`, `dpkg -c`), every
#                 header, link name (lib<name>.so) and pkg-config module (<name>.pc) the
#                 catalog lists for the library: evidence `ships` and the names found.
#
# Anything else is an error. Output rows: package <TAB> dev <TAB> evidence.
# Usage: make-alternatives.sh [CATALOG [OUT]]. Needs: bash, awk, grep, apt-get, apt-cache, dpkg.
set -euo pipefail
export LC_ALL=C
here=$(cd "$(dirname "$0")" && pwd)
catalog=${1:-$here/../../../src/native/catalog.yaml}
out=${2:-$here/alternatives.tsv}
multiarch=x86_64-linux-gnu
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

# kind <TAB> package <TAB> dev <TAB> headers <TAB> links <TAB> modules, one row per listed package
# of a verified debian entry. Relies on the catalog's layout (see make-extract.sh).
awk '
  function list(line) {
    sub(/#.*/, "", line); sub(/^[^[]*\[/, "", line); sub(/\].*$/, "", line)
    gsub(/[ \t"\047]/, "", line); return line
  }
  function rows(line, key,   v, n, a, i) {
    if (!match(line, key ": *\\[[^]]*\\]")) return
    v = substr(line, RSTART, RLENGTH); sub(/^[^[]*\[/, "", v); gsub(/[] ]/, "", v)
    n = split(v, a, ",")
    for (i = 1; i <= n; i++) if (a[i] != "") print key "\t" a[i] "\t" dev "\t" hdr "\t" lnk "\t" pc
  }
  /^  - id:/         { hdr = ""; lnk = ""; pc = ""; next }
  /^    headers:/    { hdr = list($0); next }
  /^    link:/       { lnk = list($0); next }
  /^    pkg_config:/ { pc = list($0); next }
  /^      debian:/   {
    line = $0; sub(/#.*/, "", line)
    if (line !~ /source: *verified/) next
    match(line, /dev: *[^,} ]+/); dev = substr(line, RSTART, RLENGTH); sub(/dev: */, "", dev)
    rows(line, "alternatives"); rows(line, "pulled_in_by")
  }
' "$catalog" > "$work/wanted.tsv"

# Each name is searched for as a fixed string at the end of a path.
ships() { grep -Fq -- "$2" <<<"$1" && grep -q -- "$(printf '%s' "$2" | sed 's/[][\.*^$/]/\\&/g')\$" <<<"$1"; }

printf 'package\tdev\tevidence\n' > "$work/out.tsv"
while IFS=$'\t' read -r kind package dev headers links modules; do
  if [ "$kind" = pulled_in_by ]; then
    # Dependency groups, one per line; a group with `|` is a choice, which proves nothing.
    groups=$(apt-cache show --no-all-versions "$package" 2>/dev/null |
      awk '/^(Pre-)?Depends:/ { sub(/^[^:]*: */, ""); n = split($0, g, ","); for (i = 1; i <= n; i++) print g[i] }' |
      grep -v '|' | sed 's/([^)]*)//g; s/:any//; s/^ *//; s/ *$//' || true)
    grep -qxF -- "$dev" <<<"$groups" ||
      { echo "make-alternatives: $package does not depend on $dev" >&2; exit 1; }
    printf '%s\t%s\tdepends\n' "$package" "$dev" >> "$work/out.tsv"
    continue
  fi
  (cd "$work" && apt-get download -qq "$package" >/dev/null 2>&1)
  files=$(dpkg -c "$work/${package}"_*.deb | awk '{ print $6 }' | sed 's/^\.//')
  shown=()
  for h in ${headers//,/ }; do
    ships "$(grep '^/usr/include/' <<<"$files")" "/$h" ||
      { echo "make-alternatives: $package ships no header $h" >&2; exit 1; }
    shown+=("header:$h")
  done
  for l in ${links//,/ }; do
    ships "$(grep -E "^(/usr)?/lib/$multiarch/" <<<"$files")" "/lib$l.so" ||
      { echo "make-alternatives: $package ships no lib$l.so" >&2; exit 1; }
    shown+=("link:$l")
  done
  for m in ${modules//,/ }; do
    ships "$(grep '/pkgconfig/' <<<"$files")" "/$m.pc" ||
      { echo "make-alternatives: $package ships no $m.pc" >&2; exit 1; }
    shown+=("pkgconfig:$m")
  done
  [ ${#shown[@]} -gt 0 ] || { echo "make-alternatives: $package: nothing to compare" >&2; exit 1; }
  printf '%s\t%s\tships %s\n' "$package" "$dev" "${shown[*]}" >> "$work/out.tsv"
done < "$work/wanted.tsv"
{ head -1 "$work/out.tsv"; tail -n +2 "$work/out.tsv" | sort; } > "$out"
echo "make-alternatives: wrote $(($(wc -l < "$out") - 1)) rows to $out"
