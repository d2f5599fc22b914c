#!/usr/bin/env bash
# damage each file of base index $1 in several ways; run check, nearest, info on each
base=$1
cd "$(pwd)"
for f in $(cd $base && find . -type f | sort); do
  f=${f#./}
  size=$(stat -c %s $base/$f)
  for how in trunc1 flip-head flip-mid flip-foot remove; do
    [ "$size" -eq 0 ] && [ "$how" != remove ] && continue
    rm -rf dmg; cp -a $base dmg
    case $how in
      trunc1) truncate -s $((size-1)) dmg/$f;;
      flip-head) off=$(( size > 12 ? 12 : 0 ));;
      flip-mid) off=$((size/2));;
      flip-foot) off=$((size-3 > 0 ? size-3 : 0));;
      remove) rm dmg/$f;;
    esac
    if [[ $how == flip-* ]]; then
      b=$(xxd -p -s $off -l 1 dmg/$f); nb=$(printf '%02x' $(( 0x$b ^ 0x10 ))); printf "\\x$nb" | dd of=dmg/$f bs=1 seek=$off conv=notrunc 2>/dev/null
    fi
    "$(dirname "$0")"/run.sh "check $f $how" dmg -- check --index dmg >/dev/null
    "$(dirname "$0")"/run.sh "nearest $f $how" dmg -- nearest --index dmg --activations q.npy -k 3 >/dev/null
    "$(dirname "$0")"/run.sh "info $f $how" dmg -- info --index dmg > /dev/null
  done
done
