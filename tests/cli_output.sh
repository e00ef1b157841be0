#!/usr/bin/env bash
# Output files of every command (-o, --html, --write-feeder), through the one
# output set (src/base/output.c, kilter/output.h):
#  - a character device and a FIFO are written through, not replaced (the
#    device is our own, made with mknod in a temporary directory: the real
#    /dev/null is never an output of a test);
#  - a symbolic link is followed: the file it names gets the output, the link
#    stays; a link that leads nowhere is refused;
#  - an existing file keeps its mode; a read-only file is refused and kept;
#  - the feeder being read is never overwritten (-o and --write-feeder);
#  - the same file named twice (-o X --html X) is refused and nothing written;
#  - study -o A --html B with B unwritable leaves A untouched (all or none);
#  - a 250-byte file name works; hidden temporaries of a killed kilter and an
#    older kilter's FILE.tmp.PID are cleaned up once their process is gone;
#    a kilter killed while its outputs wait leaves no temporary;
#  - a write error on standard output (--help into a full device) fails.
# Usage: bash cli_output.sh KILTER_BINARY SOURCE_DIR
set -u
kilter=$1
src=$2
w=$(mktemp -d)
trap 'rm -rf "$w"' EXIT
fail() { echo "cli_output: FAIL: $*"; exit 1; }
ieee13="$src/feeders/reference/ieee-13-node.yaml"
cd "$w" || exit 1
"$kilter" flow "$ieee13" >ref.txt || fail "flow to standard output: exit $?"
"$kilter" flow "$ieee13" --format csv >ref.csv || fail "flow csv: exit $?"

# 1. FIFO: written through (its reader gets the output), still a FIFO.
mkfifo fifo
cat fifo >from-fifo.txt &
reader=$!
"$kilter" flow "$ieee13" -o fifo; rc=$?
wait "$reader"
[ "$rc" -eq 0 ] || fail "-o FIFO: exit $rc"
[ -p fifo ] || fail "-o FIFO replaced the FIFO"
cmp -s from-fifo.txt ref.txt || fail "the FIFO's reader did not get the output"

# 2. Character device (major 1, minor 3: the null device, made here): stays a device.
if mknod devnull c 1 3 2>/dev/null; then
  "$kilter" flow "$ieee13" -o devnull || fail "-o device: exit $?"
  [ -c devnull ] || fail "-o device replaced the device with a regular file"
  ln -s devnull link-to-dev
  "$kilter" flow "$ieee13" -o link-to-dev || fail "-o link to a device: exit $?"
  [ -L link-to-dev ] && [ -c devnull ] || fail "-o link to a device replaced the link or the device"
else
  echo "cli_output: no mknod here (not root?): device case skipped"
fi
# a FIFO behind a symbolic link: written through as well
ln -s fifo link-to-fifo
cat fifo >from-link.txt &
reader=$!
"$kilter" flow "$ieee13" -o link-to-fifo; rc=$?
wait "$reader"
[ "$rc" -eq 0 ] && [ -L link-to-fifo ] && [ -p fifo ] && cmp -s from-link.txt ref.txt ||
  fail "-o link to a FIFO: exit $rc"

# 3. Symbolic link to a file: followed; the link stays, the file gets the output.
echo old >real.txt
ln -s real.txt link.txt
"$kilter" flow "$ieee13" -o link.txt || fail "-o link: exit $?"
[ -L link.txt ] || fail "-o replaced the symbolic link"
cmp -s real.txt ref.txt || fail "the file behind the link did not get the output"
ln -s nowhere.txt dangling
"$kilter" flow "$ieee13" -o dangling 2>err; rc=$?
[ "$rc" -eq 4 ] && grep -q "leads to no file" err || fail "dangling link: exit $rc, $(cat err)"
[ -L dangling ] && [ ! -e nowhere.txt ] || fail "dangling link changed"

# 4. Mode kept; a read-only file refused and kept.
echo old >m.csv
chmod 640 m.csv
"$kilter" flow "$ieee13" --format csv -o m.csv || fail "-o existing file: exit $?"
[ "$(stat -c %a m.csv)" = 640 ] || fail "mode not kept: $(stat -c %a m.csv)"
cmp -s m.csv ref.csv || fail "existing file not replaced"
echo keep >ro.txt
chmod 444 ro.txt
"$kilter" flow "$ieee13" -o ro.txt 2>err; rc=$?
[ "$rc" -eq 4 ] && grep -q "read-only" err || fail "read-only file: exit $rc, $(cat err)"
[ "$(cat ro.txt)" = keep ] && [ "$(stat -c %a ro.txt)" = 444 ] || fail "read-only file changed"

# 5. The input feeder is never an output.
cp "$ieee13" in.yaml
cp in.yaml in.bak
"$kilter" flow in.yaml -o in.yaml 2>err; rc=$?
[ "$rc" -eq 4 ] && grep -q "reads" err || fail "-o the input: exit $rc, $(cat err)"
cmp -s in.yaml in.bak || fail "-o overwrote the input feeder"
"$kilter" rebalance in.yaml --time-limit 5 --write-feeder in.yaml >/dev/null 2>err; rc=$?
[ "$rc" -ne 0 ] && grep -q "reads" err || fail "--write-feeder the input: exit $rc, $(cat err)"
cmp -s in.yaml in.bak || fail "--write-feeder overwrote the input feeder"
ln -s in.yaml in-link.yaml
"$kilter" flow in.yaml -o in-link.yaml 2>/dev/null && fail "-o a link to the input accepted"
cmp -s in.yaml in.bak || fail "-o through a link overwrote the input feeder"

# 6. One file named twice: refused, nothing written.
"$kilter" study "$ieee13" -o X --html X 2>err; rc=$?
[ "$rc" -eq 4 ] && grep -q "named twice" err || fail "-o X --html X: exit $rc, $(cat err)"
[ -e X ] && fail "-o X --html X wrote X"

# 7. All or none: B unwritable leaves A as it was.
echo keep >A
"$kilter" study "$ieee13" -o A --html nodir/B.html 2>err; rc=$?
[ "$rc" -eq 4 ] || fail "--html into a missing directory: exit $rc"
[ "$(cat A)" = keep ] || fail "study -o A --html B (B unwritable) replaced A"
echo keep >B.html
chmod 444 B.html
"$kilter" study "$ieee13" -o A --html B.html 2>err; rc=$?
[ "$rc" -eq 4 ] && [ "$(cat A)" = keep ] || fail "study -o A --html B (B read-only): exit $rc, A $(head -c 20 A)"
mkdir adir
"$kilter" rebalance "$ieee13" --time-limit 5 -o A --write-feeder new.yaml --html adir >/dev/null 2>err; rc=$?
[ "$rc" -eq 4 ] && [ "$(cat A)" = keep ] && [ ! -e new.yaml ] ||
  fail "rebalance with --html a directory: exit $rc, A or new.yaml changed"
"$kilter" rebalance "$ieee13" --time-limit 5 -o A --write-feeder new.yaml --html r.html >/dev/null ||
  fail "rebalance with three outputs: exit $?"
[ -s new.yaml ] && grep -qi "<html" r.html && [ "$(cat A)" != keep ] || fail "rebalance's three outputs"
"$kilter" check new.yaml >/dev/null || fail "the written feeder does not load"

# 8. A 250-byte file name (the longest a name may be is 255).
long=$(printf 'n%.0s' $(seq 250))
"$kilter" flow "$ieee13" -o "$long" || fail "250-byte name: exit $?"
cmp -s "$long" ref.txt || fail "250-byte name: wrong content"

# 9. Stale temporaries: a hidden one and an older kilter's FILE.tmp.PID of a process that is
# gone are removed; one of a live process (this shell) is kept.
dead=$(( $(cat /proc/sys/kernel/pid_max 2>/dev/null || echo 32768) - 1 ))
kill -0 "$dead" 2>/dev/null && dead=$((dead - 1))
touch ".kl$dead-a1B2c3" "out.txt.tmp.$dead" ".kl$$-z9Y8x7"
"$kilter" flow "$ieee13" -o out.txt || fail "-o beside stale temporaries: exit $?"
[ -e ".kl$dead-a1B2c3" ] && fail "a stale hidden temporary was left"
[ -e "out.txt.tmp.$dead" ] && fail "a stale FILE.tmp.PID was left"
[ -e ".kl$$-z9Y8x7" ] || fail "a live process's temporary was removed"
rm -f ".kl$$-z9Y8x7"
# killed while its outputs wait (the FIFO has no reader yet): no temporary left
mkdir killed
( cd killed && exec "$kilter" study "$ieee13" -o ../fifo --html r.html ) 2>/dev/null &
pid=$!
sleep 2
kill -9 "$pid" 2>/dev/null
wait "$pid" 2>/dev/null
[ -z "$(ls -A killed)" ] || fail "a killed kilter left files behind: $(ls -A killed)"
ls -A | grep -Eq '^\.kl[0-9]+-|\.tmp\.' && fail "temporaries left: $(ls -A | grep -E '^\.kl|\.tmp\.')"

# 10. Standard output that cannot be written: exit 4 with a message (major 1, minor 7: full).
if mknod full c 1 7 2>/dev/null; then
  "$kilter" flow --help >full 2>err; rc=$?
  [ "$rc" -eq 4 ] && grep -q "standard output" err || fail "flow --help into a full device: exit $rc"
  "$kilter" --help >full 2>err; rc=$?
  [ "$rc" -eq 4 ] || fail "--help into a full device: exit $rc"
  "$kilter" flow "$ieee13" >full 2>err; rc=$?
  [ "$rc" -eq 4 ] || fail "flow into a full device: exit $rc"
  "$kilter" flow "$ieee13" -o full 2>err; rc=$?
  [ "$rc" -eq 4 ] || fail "-o a full device: exit $rc"
fi
echo "cli_output: all passed"
