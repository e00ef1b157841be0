#!/usr/bin/env bash
# The layering of libkilter (DEVELOPERS.md, "Layers"), checked on the sources and on the
# compiled objects:
#   base < math < model < {io, lines} < flow < {study, rebalance} < report < cli
# 1. every #include "..." in src/<layer>/ and include/kilter/ names a header of its own
#    layer or of a layer below it (internal kl_<layer>.h headers and public kilter/*.h);
# 2. every kl_* symbol an object of src/<layer>/ uses (nm: undefined) is defined in an
#    object of its own layer or of a layer below;
# 3. no two files of one layer call each other, directly or round a longer cycle.
#   bash tests/layers.sh BUILD_DIR SOURCE_DIR
set -u
build=$1
src=$2
fails=0
fail() { echo "FAIL: $*"; fails=$((fails + 1)); }

# Layers a layer may use (itself and everything below it).
declare -A may
may[base]="base"
may[math]="base math"
may[model]="base math model"
may[io]="base math model io"
may[lines]="base math model lines"
may[flow]="base math model io lines flow"
may[study]="${may[flow]} study"
may[rebalance]="${may[flow]} rebalance"
may[report]="${may[flow]} study rebalance report"
may[cli]="${may[report]} cli"
layers="base math model io lines flow study rebalance report"

# The layer of each public header.
declare -A pub
for h in types error units progress version output; do pub[$h]=base; done
for h in sequence unbalance; do pub[$h]=math; done
pub[feeder]=model; pub[geo]=model; pub[import]=io; pub[lines]=lines; pub[network]=flow; pub[flow]=flow; pub[fault]=flow; pub[allocate]=flow
pub[limits]=study; pub[study]=study; pub[series]=study; pub[relay]=study; pub[rebalance]=rebalance; pub[report]=report; pub[table]=report; pub[geojson]=report

allowed() { # LAYER TARGET_LAYER
  case " ${may[$1]} " in *" $2 "*) return 0 ;; esac
  return 1
}

# 1. includes
check_includes() { # FILE LAYER
  local file=$1 layer=$2 inc target
  while IFS= read -r inc; do
    case "$inc" in
      kilter/*.h) target=${pub[$(basename "$inc" .h)]:-}
        [ -n "$target" ] || { fail "$file: includes $inc, a public header tests/layers.sh does not place"; continue; } ;;
      kl_*.h) target=${inc#kl_}; target=${target%.h} ;;
      *) continue ;; # a header of the file's own folder (src/cli) or a system one
    esac
    allowed "$layer" "$target" || fail "$file ($layer) includes $inc ($target): an include that runs up the layers"
  done < <(sed -n 's/^[[:space:]]*#[[:space:]]*include[[:space:]]*"\([^"]*\)".*/\1/p' "$file")
}
for layer in $layers cli; do
  for f in "$src"/src/$layer/*.[ch]; do check_includes "$f" "$layer"; done
done
for f in "$src"/include/kilter/*.h; do
  h=$(basename "$f" .h)
  [ -n "${pub[$h]:-}" ] || { fail "include/kilter/$h.h: not placed in a layer (tests/layers.sh)"; continue; }
  check_includes "$f" "${pub[$h]}"
done

# 2. and 3. calls, from the objects of each layer's object library.
command -v nm >/dev/null || { echo "skip: nm not installed"; exit 77; }
declare -A def_layer def_file
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
for layer in $layers; do
  objs=$(find "$build/CMakeFiles/kl_$layer.dir" -name '*.o' 2>/dev/null | sort)
  [ -n "$objs" ] || { fail "no objects of layer $layer under $build/CMakeFiles/kl_$layer.dir"; continue; }
  for o in $objs; do
    base=$(basename "$o" .c.o)
    nm "$o" | awk -v f="$layer/$base" '$2 ~ /^[TDRB]$/ && $3 ~ /^kl_/ { print "D", f, $3 }
                                         $1 == "U" && $2 ~ /^kl_/ { print "U", f, $2 }' >>"$tmp/syms"
  done
done
while read -r kind file sym; do
  [ "$kind" = D ] && { def_layer[$sym]=${file%%/*}; def_file[$sym]=$file; }
done <"$tmp/syms"
: >"$tmp/edges"
while read -r kind file sym; do
  [ "$kind" = U ] || continue
  layer=${file%%/*}
  target=${def_layer[$sym]:-}
  [ -n "$target" ] || { fail "$file uses $sym, defined in no layer"; continue; }
  allowed "$layer" "$target" || fail "src/$file.c ($layer) calls $sym of src/${def_file[$sym]}.c ($target): a call that runs up the layers"
  [ "$file" != "${def_file[$sym]}" ] && echo "$file ${def_file[$sym]}" >>"$tmp/edges"
done <"$tmp/syms"
sort -u "$tmp/edges" -o "$tmp/edges"
# tsort reports a cycle of the file graph on standard error.
if ! tsort "$tmp/edges" >/dev/null 2>"$tmp/cycle"; then
  fail "files call each other round a cycle: $(grep -v 'input contains a loop' "$tmp/cycle" | sed 's/^tsort: //' | tr '\n' ' ')"
fi
nedges=$(wc -l <"$tmp/edges")
if [ "$fails" -gt 0 ]; then echo "$fails layering problem(s)"; exit 1; fi
echo "ok: includes and $nedges file-to-file calls follow the layers, no cycle"
