#!/usr/bin/env bash
# One case of the bad-input sweep: run.sh NAME IDX -- ARGS...  (IDX: an index folder whose files are
# hashed before and after, or -). Appends "NAME rc=N [LINES=n] [TRACE] [INDEX-CHANGED] | first
# stderr line" to results.txt in the working folder. Run from the folder make_bad_inputs.py filled.
name=$1; idx=$2; shift 3
here=$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)
J=$("$here/bin/find-jdk")/bin/java
h() { [ -d "$1" ] && (cd "$1" && find . -type f -print0 | sort -z | xargs -0 sha256sum | sha256sum | cut -c1-12) || echo none; }
before=$( [ "$idx" != - ] && h "$idx" )
$J --add-modules jdk.incubator.vector -Dactindex.stderr.tty=false -jar "$here/src-demo/target/actindex.jar" "$@" >out.txt 2>err.raw
rc=$?
grep -v 'Using incubator modules' err.raw > err.txt
after=$( [ "$idx" != - ] && h "$idx" )
n=$(wc -l < err.txt)
flag=""
[ "$n" -ne 1 ] && [ "$rc" -ne 0 ] && flag="$flag LINES=$n"
grep -q '^\s*at [a-z]' err.txt && flag="$flag TRACE"
[ "$before" != "$after" ] && flag="$flag INDEX-CHANGED"
printf '%-34s rc=%s%s | %s\n' "$name" "$rc" "$flag" "$(head -c 300 err.txt | head -1)" | tee -a results.txt
