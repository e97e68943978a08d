#!/usr/bin/env bash
# Regenerates alternatives.tsv: for every `also` package of a verified debian entry in
# src/native/catalog.yaml, the evidence from Debian's archive that it gives a source build
# what the entry's `dev` package gives.
#
#   depends  the package depends on `dev` (a transitional or default name, such as
#            libjpeg-dev), read with `apt-cache show`;
#   ships    the package's own file list (`apt-get download`, `dpkg -c`) holds every link
#            name (lib<name>.so) and pkg-config module (<name>.pc) the catalog lists for the
#            library: another build of it (libcurl4-gnutls-dev beside libcurl4-openssl-dev).
#
# A package that shows neither is an error. Output rows: also <TAB> dev <TAB> evidence.
# Usage: make-alternatives.sh [CATALOG [OUT]]. Needs: bash, awk, apt-get, apt-cache, dpkg.
set -euo pipefail
export LC_ALL=C
here=$(cd "$(dirname "$0")" && pwd)
catalog=${1:-$here/../../../src/native/catalog.yaml}
out=${2:-$here/alternatives.tsv}
multiarch=x86_64-linux-gnu
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

# id <TAB> dev <TAB> also,also <TAB> links <TAB> modules, for verified debian entries with `also`.
awk '
  function list(line) {
    sub(/#.*/, "", line); sub(/^[^[]*\[/, "", line); sub(/\].*$/, "", line)
    gsub(/[ \t"\047]/, "", line); return line
  }
  /^  - id:/         { id = $3; lnk = ""; pc = ""; next }
  /^    link:/       { lnk = list($0); next }
  /^    pkg_config:/ { pc = list($0); next }
  /^      debian:/   {
    line = $0; sub(/#.*/, "", line)
    if (line !~ /source: *verified/ || !match(line, /also: *\[[^]]*\]/)) next
    also = substr(line, RSTART, RLENGTH); sub(/also: */, "", also); gsub(/[][ ]/, "", also)
    match(line, /dev: *[^,} ]+/); dev = substr(line, RSTART, RLENGTH); sub(/dev: */, "", dev)
    print id "\t" dev "\t" also "\t" lnk "\t" pc
  }
' "$catalog" > "$work/wanted.tsv"

printf 'also\tdev\tevidence\n' > "$work/out.tsv"
while IFS=$'\t' read -r id dev alsos links modules; do
  for also in ${alsos//,/ }; do
    depends=$(apt-cache show --no-all-versions "$also" 2>/dev/null |
      awk '/^(Pre-)?Depends:/ { sub(/^[^:]*:/, ""); gsub(/\([^)]*\)/, ""); gsub(/[|,]/, " "); print }' |
      tr ' ' '\n' | sed 's/:any$//' | grep -vx '' || true)
    if grep -qx "$dev" <<<"$depends"; then
      printf '%s\t%s\tdepends\n' "$also" "$dev" >> "$work/out.tsv"
      continue
    fi
    (cd "$work" && apt-get download -qq "$also" >/dev/null)
    files=$(dpkg -c "$work/${also}"_*.deb | awk '{ print $6 }' | sed 's/^\.//')
    shown=()
    for l in ${links//,/ }; do
      grep -Eq "^/usr/lib/$multiarch/(.*/)?lib$l\.so\$|^/lib/$multiarch/(.*/)?lib$l\.so\$" <<<"$files" ||
        { echo "make-alternatives: $also ($id) ships no lib$l.so and does not depend on $dev" >&2; exit 1; }
      shown+=("link:$l")
    done
    for m in ${modules//,/ }; do
      grep -Eq "/pkgconfig/$m\.pc\$" <<<"$files" ||
        { echo "make-alternatives: $also ($id) ships no $m.pc and does not depend on $dev" >&2; exit 1; }
      shown+=("pkgconfig:$m")
    done
    [ ${#shown[@]} -gt 0 ] || { echo "make-alternatives: $also ($id): nothing to compare" >&2; exit 1; }
    printf '%s\t%s\tships %s\n' "$also" "$dev" "${shown[*]}" >> "$work/out.tsv"
  done
done < "$work/wanted.tsv"
{ head -1 "$work/out.tsv"; tail -n +2 "$work/out.tsv" | sort; } > "$out"
echo "make-alternatives: wrote $(($(wc -l < "$out") - 1)) rows to $out"
