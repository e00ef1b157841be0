#!/usr/bin/env bash
# Installation: `cmake --install` into a temporary prefix, then
#  1. every part is in its place (program, static and shared library, public headers with
#     kilter/version.h, kilter.pc, manual page, bundled feeders);
#  2. the installed library keeps no mutable state (no object has a symbol in .data, .bss
#     or thread-local storage: kilter/error.h promises threads may use it at once), and
#     the shared one exports only kl_* names;
#  3. a small C program (tests/install/probe.c) built with nothing but
#     `pkg-config --cflags --libs kilter` loads the installed demo feeder, solves the flow,
#     and prints the same bus voltages as the installed `kilter flow --format csv`;
#  4. the installed program, moved elsewhere and run from another directory, finds its demo
#     under its own prefix (kilter CMD --help names it) and runs it, and carries no path to
#     the source tree's feeders.
#   bash tests/cli_install.sh KILTER_BINARY SOURCE_DIR
# The build directory is the program's; KILTER_TEST_CC and KILTER_TEST_CFLAGS (set by
# CMakeLists.txt) give the compiler and the sanitizer flags of the build; KILTER_TEST_SHARED
# (ON by default) whether the shared library is built (KILTER_SHARED).
set -u
kilter=$1
src=$2
build=$(cd "$(dirname "$kilter")" && pwd)
cc=${KILTER_TEST_CC:-cc}
cflags=${KILTER_TEST_CFLAGS:-}
fails=0
fail() { echo "FAIL: $*"; fails=$((fails + 1)); }
command -v pkg-config >/dev/null || { echo "skip: pkg-config not installed"; exit 77; }
work=$(mktemp -d)
work=$(cd "$work" && pwd -P)
trap 'rm -rf "$work"' EXIT
prefix=$work/prefix

cmake --install "$build" --prefix "$prefix" >"$work/install.log" 2>&1 ||
    { cat "$work/install.log"; echo "FAIL: cmake --install exited non-zero"; exit 1; }

# 1. the parts
pc=$(find "$prefix" -name kilter.pc -path '*/pkgconfig/*' | head -1)
[ -n "$pc" ] || { echo "FAIL: no kilter.pc installed"; exit 1; }
libdir=$(dirname "$(dirname "$pc")")
for f in bin/kilter share/man/man1/kilter.1 share/kilter/README.md \
         share/kilter/demo/quillmere-f3.yaml share/kilter/reference/ieee-13-node.yaml \
         include/kilter/version.h; do
    [ -f "$prefix/$f" ] || fail "$f not installed"
done
for h in "$src"/include/kilter/*.h; do
    cmp -s "$h" "$prefix/include/kilter/$(basename "$h")" || fail "include/kilter/$(basename "$h") not installed as it is"
done
cmp -s "$src/feeders/demo/quillmere-f3.yaml" "$prefix/share/kilter/demo/quillmere-f3.yaml" ||
    fail "the installed demo feeder differs from feeders/demo/quillmere-f3.yaml"
[ -f "$libdir/libkilter.a" ] || fail "libkilter.a not in $libdir"
shared=${KILTER_TEST_SHARED:-ON}
if [ "$shared" = ON ]; then
    [ -e "$libdir/libkilter.so" ] || fail "libkilter.so not in $libdir"
fi
version=$("$prefix/bin/kilter" --version)
grep -q "^#define KL_VERSION \"${version#kilter }\"$" "$prefix/include/kilter/version.h" ||
    fail "kilter/version.h does not say '$version'"
[ "$(PKG_CONFIG_PATH=$libdir/pkgconfig pkg-config --modversion kilter)" = "${version#kilter }" ] ||
    fail "kilter.pc's version is not ${version#kilter }"
grep -q "^prefix=$prefix$" "$pc" || fail "kilter.pc does not name the prefix installed to ($prefix)"
if command -v groff >/dev/null; then
    groff -man -ww -z "$prefix/share/man/man1/kilter.1" >"$work/man.log" 2>&1 && ! [ -s "$work/man.log" ] ||
        { fail "the manual page has roff warnings"; head -5 "$work/man.log"; }
fi

# 2. no mutable state in the library; the shared one exports the public API only.
if command -v objdump >/dev/null; then
    # Sanitizers add their own globals (__asan_*, __odr_asan*, .L*; clang's UBSan its handler data,
    # __unnamed_*); the library's are checked.
    objdump -t "$libdir/libkilter.a" |
        awk '$0 ~ /[ \t](\.data|\.bss|\.tdata|\.tbss|\*COM\*)[ \t]/ && $NF !~ /^(\.|__asan|__odr_asan|__ubsan|__sancov|__unnamed_)/' \
        >"$work/state"
    [ -s "$work/state" ] && { fail "libkilter.a has mutable global state:"; head -5 "$work/state"; }
fi
if [ -e "$libdir/libkilter.so" ]; then
    # names as exported, without their version (kl_feeder_load@@KILTER_0)
    nm -D --defined-only "$libdir/libkilter.so" | awk '{ sub(/@.*/, "", $3); print $2, $3 }' >"$work/dynsym"
    awk '$2 !~ /^kl_/ && $2 != "KILTER_0" { print $2 }' "$work/dynsym" >"$work/exports"
    [ -s "$work/exports" ] && { fail "libkilter.so exports names outside kl_*:"; head -5 "$work/exports"; }
    grep -q ' kl_kron_reduce$' "$work/dynsym" || fail "libkilter.so lacks kl_kron_reduce (public)"
    grep -q ' kl_malloc$' "$work/dynsym" && fail "libkilter.so exports kl_malloc (internal)"
fi

# 3. a program built against the installed library with pkg-config alone; first, every
# public header compiles on its own.
flags=$(PKG_CONFIG_PATH=$libdir/pkgconfig pkg-config --cflags --libs kilter) || fail "pkg-config --cflags --libs kilter"
for h in "$prefix"/include/kilter/*.h; do
    # shellcheck disable=SC2086
    printf '#include <kilter/%s>\n' "$(basename "$h")" |
        "$cc" -std=c11 -fsyntax-only -x c - $(PKG_CONFIG_PATH=$libdir/pkgconfig pkg-config --cflags kilter) 2>"$work/h.log" ||
        { fail "kilter/$(basename "$h") does not compile on its own"; head -3 "$work/h.log"; }
done
# shellcheck disable=SC2086
# (-lm for the probe's own cabs(); everything of libkilter comes from pkg-config.)
"$cc" -std=c11 $cflags -o "$work/probe" "$src/tests/install/probe.c" $flags -lm 2>"$work/cc.log" ||
    { fail "the probe does not build with: $cc $cflags ... $flags"; cat "$work/cc.log"; }
demo=$prefix/share/kilter/demo/quillmere-f3.yaml
if [ -x "$work/probe" ]; then
    LD_LIBRARY_PATH=$libdir "$work/probe" "$demo" >"$work/probe.out" 2>"$work/probe.err" ||
        { fail "the probe exited $?"; cat "$work/probe.err"; }
    grep -q "^# libkilter ${version#kilter }$" "$work/probe.out" || fail "the probe does not see version ${version#kilter }"
    "$prefix/bin/kilter" flow --format csv "$demo" | cut -d, -f1-3 >"$work/kilter.csv"
    grep -v '^#' "$work/probe.out" >"$work/probe.csv"
    [ "$(wc -l <"$work/probe.csv")" -gt 100 ] || fail "the probe printed $(wc -l <"$work/probe.csv") lines"
    cmp -s "$work/probe.csv" "$work/kilter.csv" ||
        { fail "the probe's bus voltages differ from kilter flow's"; diff "$work/probe.csv" "$work/kilter.csv" | head -5; }
fi

# 4. the installed program moved, and run from elsewhere, finds its own demo
mv "$prefix" "$work/moved"
mkdir "$work/elsewhere"
cd "$work/elsewhere" || exit 1
moved_demo=$work/moved/share/kilter/demo/quillmere-f3.yaml
for cmd in check lines flow study rebalance; do
    "$work/moved/bin/kilter" $cmd --help | grep -qx "  $moved_demo" ||
        fail "kilter $cmd --help does not name the demo under the moved prefix ($moved_demo)"
done
"$work/moved/bin/kilter" flow --format csv >"$work/demo.csv" 2>"$work/demo.err" ||
    { fail "the moved kilter does not run its demo: exit $?"; cat "$work/demo.err"; }
(cd "$src" && "$kilter" flow --format csv feeders/demo/quillmere-f3.yaml) | cmp -s - "$work/demo.csv" ||
    fail "the moved kilter's demo flow differs from the build's on feeders/demo/quillmere-f3.yaml"
if command -v objcopy >/dev/null; then
    objcopy -O binary --only-section=.rodata "$work/moved/bin/kilter" "$work/rodata"
    grep -q -a "$src/feeders" "$work/rodata" && fail "bin/kilter still holds the source tree's feeders path"
fi

if [ "$fails" -gt 0 ]; then echo "$fails failure(s)"; exit 1; fi
echo "ok: installed under a temporary prefix; pkg-config build of the probe matches kilter flow; the moved program runs its own demo"
