#!/usr/bin/env bash
# Regenerates extract.tsv: a small extract of Debian's package archive
# (file lists of -dev packages) used as an external reference by basefit's tests.
#
# For every library in src/native/catalog.yaml whose debian entry says
# "source: verified", the script downloads that entry's dev package with
# `apt-get download` into a temporary directory, reads its file list with
# `dpkg -c`, and writes one row for each header, pkg-config module and link
# name that the catalog lists for it, naming the package whose file list
# contains it.  A name that no downloaded file list contains is an error.
# For each link name it also writes a `runtime` row: the package shipping the
# shared object the dev package's lib<name>.so resolves to (symlinks followed
# through the dev package's same-source dependencies and the catalog's runtime
# packages, also downloaded; linker scripts read), which is what a build linked
# with -l<name> needs at run time, and one `shared` row for every lib*.so.* name
# that package ships resolving to that same file (the soname a loader looks for).
#
# How names are derived from a file list (amd64, multiarch x86_64-linux-gnu):
#   header     a file under /usr/include, /usr/include/x86_64-linux-gnu or any
#              -I directory in the Cflags of a .pc file shipped by the same
#              package, named relative to that directory (a file under several
#              such directories gets one name for each)
#   pkgconfig  NAME for a file .../pkgconfig/NAME.pc under /usr/lib or /usr/share
#   link       NAME for a file or symlink .../libNAME.so under
#              /usr/lib/x86_64-linux-gnu or /lib/x86_64-linux-gnu
#
# Usage: make-extract.sh [--debs DIR] [--index] [CATALOG [OUT]]
#   --debs DIR  use the .deb files already in DIR instead of downloading
#   --index     print every derivable row of the downloaded packages
#               (not only the catalog's) to OUT instead of the extract
# Defaults: CATALOG = ../../../src/native/catalog.yaml, OUT = ./extract.tsv
# (both relative to this script).  Needs: bash, awk, sort, apt-get, apt-cache,
# dpkg, tar.
set -euo pipefail
export LC_ALL=C

here=$(cd "$(dirname "$0")" && pwd)
debs_dir=""
index_only=0
while [ $# -gt 0 ]; do
  case "$1" in
    --debs) debs_dir=$2; shift 2 ;;
    --index) index_only=1; shift ;;
    -h|--help) sed -n '2,33p' "$0"; exit 0 ;;
    *) break ;;
  esac
done
catalog=${1:-$here/../../../src/native/catalog.yaml}
out=${2:-$here/extract.tsv}
multiarch=x86_64-linux-gnu

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

# 1. Wanted rows from the catalog: kind <TAB> name <TAB> dev package.
#    Relies on the catalog's layout: one key per line, lists in [a, b] form,
#    families.debian as a one-line {dev: ..., runtime: ..., source: ...} map.
awk -v candfile="$work/catalog-runtime.tsv" '
  function flush(   i, n, a) {
    if (id != "" && dev != "" && src == "verified") {
      n = split(hdr, a, ","); for (i = 1; i <= n; i++) if (a[i] != "") print "header\t" a[i] "\t" dev
      n = split(pc,  a, ","); for (i = 1; i <= n; i++) if (a[i] != "") print "pkgconfig\t" a[i] "\t" dev
      n = split(lnk, a, ","); for (i = 1; i <= n; i++) if (a[i] != "") print "link\t" a[i] "\t" dev
    }
    id = ""; hdr = ""; pc = ""; lnk = ""; dev = ""; src = ""
  }
  function list(line) {
    sub(/#.*/, "", line); sub(/^[^[]*\[/, "", line); sub(/\].*$/, "", line)
    gsub(/[ \t"\047]/, "", line); return line
  }
  /^  - id:/              { flush(); id = $3; next }
  /^    headers:/         { hdr = list($0); next }
  /^    pkg_config:/      { pc = list($0); next }
  /^    link:/            { lnk = list($0); next }
  /^      debian:/        {
    line = $0; sub(/#.*/, "", line)
    if (match(line, /dev: *[^,} ]+/))    { dev = substr(line, RSTART, RLENGTH); sub(/dev: */, "", dev) }
    if (match(line, /source: *[^,} ]+/)) { src = substr(line, RSTART, RLENGTH); sub(/source: */, "", src) }
    # runtime: one name or a [a, b] list; each is a candidate for step 2b.
    if (src == "verified" && match(line, /runtime: *(\[[^]]*\]|[^,} ]+)/)) {
      rt = substr(line, RSTART, RLENGTH); sub(/runtime: */, "", rt); gsub(/[][ ]/, "", rt)
      n = split(rt, a, ","); for (i = 1; i <= n; i++) if (a[i] != "") print "candidate\t" a[i] "\t" dev > candfile
    }
    next
  }
  END { flush() }
' "$catalog" | sort -u > "$work/wanted.tsv"

if [ ! -s "$work/wanted.tsv" ]; then
  echo "make-extract: no verified debian entries found in $catalog" >&2
  exit 1
fi

# 2. The dev packages, and the runtime candidates: for each dev package, every package it
#    depends on, directly or through such packages, that is built from the same Debian
#    source package (apt-cache's Source field), plus the runtime packages the catalog names.
#    The shared objects a link name resolves to are looked for in their file lists.
cut -f3 "$work/wanted.tsv" | sort -u > "$work/packages.txt"
touch "$work/catalog-runtime.tsv"
source_of() {
  apt-cache show --no-all-versions "$1" 2>/dev/null |
    awk '/^Package:/ { p = $2 } /^Source:/ { s = $2 } END { if (p != "") print (s != "" ? s : p) }'
}
depends_of() {
  apt-cache show --no-all-versions "$1" 2>/dev/null |
    awk '/^(Pre-)?Depends:/ { sub(/^[^:]*:/, ""); gsub(/\([^)]*\)/, ""); gsub(/[|,]/, " "); print }' |
    tr ' ' '\n' | sed 's/:any$//' | grep -v '^$' | sort -u || true
}
: > "$work/candidates.txt"
while read -r dev; do
  src=$(source_of "$dev")
  if [ -z "$src" ]; then
    echo "make-extract: apt knows no package $dev" >&2
    exit 1
  fi
  queue=("$dev"); seen=" $dev "
  while [ ${#queue[@]} -gt 0 ]; do
    pkg=${queue[0]}; queue=("${queue[@]:1}")
    for dep in $(depends_of "$pkg"); do
      case "$seen" in *" $dep "*) continue ;; esac
      seen="$seen$dep "
      if [ "$(source_of "$dep")" = "$src" ]; then
        echo "$dep" >> "$work/candidates.txt"
        queue+=("$dep")
      fi
    done
  done
done < "$work/packages.txt"
cut -f2 "$work/catalog-runtime.tsv" >> "$work/candidates.txt"
sort -u "$work/candidates.txt" | comm -23 - "$work/packages.txt" > "$work/runtime-packages.txt"
if [ -z "$debs_dir" ]; then
  debs_dir=$work/debs
  mkdir -p "$debs_dir"
  chmod 777 "$work" "$debs_dir"   # lets apt fetch as its unprivileged user
  (cd "$debs_dir" && cat "$work/packages.txt" "$work/runtime-packages.txt" | xargs apt-get download -q >&2)
fi

# 3. Index: every row derivable from each package's file list.
: > "$work/index.tsv"
while read -r pkg; do
  deb=$(ls "$debs_dir"/"${pkg}"_*.deb 2>/dev/null | head -n1 || true)
  if [ -z "$deb" ]; then
    echo "make-extract: no .deb for $pkg in $debs_dir" >&2
    exit 1
  fi
  echo "$pkg $(dpkg-deb -f "$deb" Version)" >> "$work/versions.txt"

  # Include roots from the Cflags of the package's own .pc files.
  pcdir=$work/pc/$pkg
  mkdir -p "$pcdir"
  dpkg-deb --fsys-tarfile "$deb" | tar -x -C "$pcdir" --wildcards '*.pc' 2>/dev/null || true
  find "$pcdir" -type f -name '*.pc' | sort | while read -r f; do
    awk '
      function expand(s,   guard, name) {
        guard = 0
        while (match(s, /\$\{[A-Za-z0-9_.]+\}/) && guard++ < 50) {
          name = substr(s, RSTART + 2, RLENGTH - 3)
          s = substr(s, 1, RSTART - 1) var[name] substr(s, RSTART + RLENGTH)
        }
        return s
      }
      /^[A-Za-z0-9_.]+=/ { k = $0; sub(/=.*/, "", k); v = $0; sub(/^[^=]*=/, "", v); var[k] = expand(v); next }
      /^Cflags:/ {
        s = expand($0); sub(/^Cflags:/, "", s)
        n = split(s, t, /[ \t]+/)
        for (i = 1; i <= n; i++) if (t[i] ~ /^-I/) { d = substr(t[i], 3); sub(/\/+$/, "", d); print d }
      }
    ' "$f"
  done | sort -u > "$work/roots.txt"

  dpkg -c "$deb" | awk -v pkg="$pkg" -v ma="$multiarch" -v rootsfile="$work/roots.txt" '
    BEGIN {
      nr = 0
      roots[++nr] = "/usr/include"; roots[++nr] = "/usr/include/" ma
      while ((getline r < rootsfile) > 0) if (r != "") roots[++nr] = r
    }
    {
      p = $6
      if (substr($1, 1, 1) == "d") next
      sub(/^\./, "", p)
      for (i = 1; i <= nr; i++) {
        pre = roots[i] "/"
        if (substr(p, 1, length(pre)) == pre) print "header\t" substr(p, length(pre) + 1) "\t" pkg
      }
      if (p ~ /^\/usr\/(lib|share)\/.*pkgconfig\/[^\/]+\.pc$/) {
        n = p; sub(/^.*\//, "", n); sub(/\.pc$/, "", n); print "pkgconfig\t" n "\t" pkg
      }
      if (p ~ ("^(/usr)?/lib/" ma "/(.*/)?lib[^/]+\\.so$")) {
        n = p; sub(/^.*\/lib/, "", n); sub(/\.so$/, "", n); print "link\t" n "\t" pkg
      }
    }
  ' >> "$work/index.tsv"
done < "$work/packages.txt"
sort -u -o "$work/index.tsv" "$work/index.tsv"
echo "make-extract: package versions read:" >&2
sed 's/^/  /' "$work/versions.txt" >&2

if [ "$index_only" = 1 ]; then
  { printf 'kind\tname\tpackage\n'; cat "$work/index.tsv"; } > "$out"
  echo "make-extract: wrote full index to $out" >&2
  exit 0
fi

# 3b. Runtime rows: for each wanted link name, the package shipping the shared object that
#     the dev package's lib<name>.so resolves to (usually lib<name>.so.N): symlinks are
#     followed through every downloaded package, and a linker script (such as ncurses's
#     libncursesw.so, `INPUT(libncursesw.so.6 -ltinfo)`) is read for its lib<name>.so.*
#     file. This is the package a prebuilt binary linked with -l<name> needs at run time.
: > "$work/files.tsv"
: > "$work/runtime-versions.txt"
cat "$work/packages.txt" "$work/runtime-packages.txt" | while read -r pkg; do
  deb=$(ls "$debs_dir"/"${pkg}"_*.deb 2>/dev/null | head -n1 || true)
  if [ -z "$deb" ]; then
    echo "make-extract: no .deb for $pkg in $debs_dir" >&2
    exit 1
  fi
  if ! grep -qx "$pkg" "$work/packages.txt"; then
    echo "$pkg $(dpkg-deb -f "$deb" Version)" >> "$work/runtime-versions.txt"
  fi
  dpkg -c "$deb" | awk -v pkg="$pkg" '
    { t = substr($1, 1, 1); p = $6; sub(/^\./, "", p) }
    t == "-" { print p "\t-\t-\t" pkg }
    t == "l" { print p "\tl\t" $8 "\t" pkg }
  ' >> "$work/files.tsv"
done
declare -A ftype ftarget fpkg
while IFS=$'\t' read -r path type target pkg; do
  ftype[$path]=$type; ftarget[$path]=$target; fpkg[$path]="${fpkg[$path]:-}${fpkg[$path]:+ }$pkg"
done < "$work/files.tsv"
echo "make-extract: runtime candidate versions read:" >&2
sed 's/^/  /' "$work/runtime-versions.txt" >&2
normalize() {   # an absolute path with . and .. taken out
  local IFS=/ part out=()
  for part in $1; do
    case "$part" in
      '' | .) ;;
      ..) [ ${#out[@]} -gt 0 ] && out=("${out[@]:0:${#out[@]}-1}") ;;
      *) out+=("$part") ;;
    esac
  done
  printf '/%s' "${out[@]}"
}
resolve() {   # a path with its symlinks followed through the downloaded file lists
  local p=$1 t
  for _ in $(seq 30); do
    [ "${ftype[$p]:-}" = l ] || break
    t=${ftarget[$p]}
    case "$t" in /*) p=$(normalize "$t") ;; *) p=$(normalize "${p%/*}/$t") ;; esac
  done
  printf '%s' "$p"
}
: > "$work/runtime.tsv"
runtime_bad=0
while IFS=$'\t' read -r kind name dev; do
  [ "$kind" = link ] || continue
  starts=$(awk -F'\t' -v dev="$dev" -v name="$name" -v ma="$multiarch" '
    $4 == dev && $1 ~ ("^(/usr)?/lib/" ma "/(.*/)?lib[^/]+\\.so$") {
      n = $1; sub(/^.*\/lib/, "", n); sub(/\.so$/, "", n); if (n == name) print $1
    }' "$work/files.tsv")
  if [ -z "$starts" ]; then
    echo "make-extract: $dev ships no lib$name.so" >&2; runtime_bad=1; continue
  fi
  for path in $starts; do
    found=""
    for _ in $(seq 30); do
      type=${ftype[$path]:-}
      if [ "$type" = l ]; then
        target=${ftarget[$path]}
        case "$target" in /*) path=$(normalize "$target") ;; *) path=$(normalize "${path%/*}/$target") ;; esac
      elif [ "$type" = - ] && [ "${path##*/}" = "lib$name.so" ]; then
        # A linker script: the lib<name>.so.* file it names, looked up beside it, then in
        # the multiarch library directories.
        deb=$(ls "$debs_dir"/"${fpkg[$path]%% *}"_*.deb | head -n1)
        file=$(dpkg-deb --fsys-tarfile "$deb" | tar -xO ".$path" | tr '() \t' '\n\n\n\n' |
          awk -v want="lib$name.so." 'substr($0, 1, length(want)) == want { print; exit }')
        next=""
        for dir in "${path%/*}" "/usr/lib/$multiarch" "/lib/$multiarch"; do
          if [ -n "$file" ] && [ -n "${ftype[$dir/$file]:-}" ]; then next="$dir/$file"; break; fi
        done
        if [ -z "$next" ]; then
          echo "make-extract: linker script $path (in $dev) names no lib$name.so.* file any downloaded package ships" >&2
          runtime_bad=1; break
        fi
        path=$next
      elif [ "$type" = - ]; then
        found=${fpkg[$path]}; break
      else
        echo "make-extract: lib$name.so (in $dev) leads to $path, which no downloaded package ships" >&2
        runtime_bad=1; break
      fi
    done
    for pkg in $found; do
      if [ "$pkg" = "$dev" ]; then
        echo "make-extract: lib$name.so resolves to $path in $dev itself" >&2; runtime_bad=1
      else
        printf 'runtime\t%s\t%s\n' "$name" "$pkg" >> "$work/runtime.tsv"
        # Shared-object rows: every lib*.so.* name the runtime package ships that resolves
        # to the same file, the soname a loader looks for among them.
        for cand in $(awk -F'\t' -v pkg="$pkg" -v ma="$multiarch" '
            $4 == pkg && $1 ~ ("^(/usr)?/lib/" ma "/(.*/)?lib[^/]+\\.so\\.[^/]*$") { print $1 }' "$work/files.tsv"); do
          if [ "$(resolve "$cand")" = "$path" ]; then
            printf 'shared\t%s\t%s\n' "${cand##*/}" "$pkg" >> "$work/runtime.tsv"
          fi
        done
      fi
    done
  done
done < "$work/wanted.tsv"
if [ "$runtime_bad" = 1 ]; then
  echo "make-extract: a link name resolves to no runtime package (see above); $out not written" >&2
  exit 1
fi
sort -u -o "$work/runtime.tsv" "$work/runtime.tsv"

# 4. Extract: for each wanted (kind, name), every package whose list has it;
#    the catalog's own dev package must be one of them.
awk -F'\t' -v idx="$work/index.tsv" '
  BEGIN { while ((getline l < idx) > 0) { split(l, f, "\t"); k = f[1] "\t" f[2]; has[k] = has[k] " " f[3]; row[l] = 1 } }
  {
    k = $1 "\t" $2
    if (!(k in has)) { print "make-extract: not in any file list: " $1 " " $2 " (catalog says " $3 ")" > "/dev/stderr"; bad = 1; next }
    if (!(($1 "\t" $2 "\t" $3) in row)) { print "make-extract: " $1 " " $2 " is in" has[k] ", not in " $3 > "/dev/stderr"; bad = 1 }
    n = split(substr(has[k], 2), ps, " ")
    for (i = 1; i <= n; i++) print $1 "\t" $2 "\t" ps[i]
  }
  END { exit bad }
' "$work/wanted.tsv" | sort -u > "$work/extract.tsv" || {
  echo "make-extract: catalog and archive disagree (see above); $out not written" >&2
  exit 1
}
sort -u -o "$work/extract.tsv" "$work/extract.tsv" "$work/runtime.tsv"
{ printf 'kind\tname\tpackage\n'; cat "$work/extract.tsv"; } > "$out"
echo "make-extract: wrote $(wc -l < "$work/extract.tsv") rows to $out" >&2
