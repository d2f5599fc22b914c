#!/usr/bin/env python3
"""same_index.py A B: are two index folders the same bytes, apart from what differs between any two builds
of the same input (the index UUID and the checksums over it, the Lucene segment's diagnostics: a timestamp,
in any order)? Exit 0 when they are, 1 (naming the files) when not.

Two builds of one input differ in more unless both run with
  ACTINDEX_JAVA_OPTS=-Dtests.seed=SOMETHING   (fixes Lucene's random segment ids)
  ACTINDEX_PLANNER_COSTS=FILE                 (the same planner costs, so the same search tables;
                                               `actindex calibrate-planner --out FILE` writes one)
Used to check that a change to how `build` reads its input leaves the index files as they were:
build with the old jar and the new one, then compare. For `add`: build one index, copy its folder
twice, add the same file to one copy with the old jar and to the other with the new one (the copies
share the index UUID), then compare. (Python 3 only; never a test dependency.)"""
import os, re, sys

def files(d):
    out = {}
    for root, _, names in os.walk(d):
        for n in names:
            p = os.path.join(root, n)
            out[os.path.relpath(p, d)] = open(p, 'rb').read()
    return out

def normal(fs):
    # the manifest's header: magic, codec name, version, layout hash, then the index UUID
    uuid = fs['manifest-' + max((k.split('-')[1] for k in fs if k.startswith('manifest-')), key=int)][33:49]
    volatile = [b[-4:] for k, b in fs.items() if not k.startswith('meta/') and len(b) >= 4]
    out = {}
    for k, b in fs.items():
        if k.startswith('meta/') and k.endswith('.si'):
            # the header (segment id, doc count) as is; the diagnostics map comes in any order and holds a timestamp
            at = min(b.index(k) for k in (b'lucene.version', b'java.vendor', b'source', b'timestamp', b'os'))
            b = b[:at - 1] + b'\n'.join(sorted(re.findall(rb'[ -~]{2,}', re.sub(rb'timestamp.\d+', b'timestamp', b[at - 1:-8]))))
        elif not k.startswith('meta/'):
            assert k.startswith('manifest') or uuid in b or len(b) == 0, (k, 'no uuid')
            b = b.replace(uuid, b'\0' * 16)
            for v in volatile:
                b = b.replace(v, b'\0' * 4)
        out[k] = b
    return out

a, b = normal(files(sys.argv[1])), normal(files(sys.argv[2]))
bad = sorted(k for k in set(a) | set(b) if a.get(k) != b.get(k))
print('same' if not bad else 'DIFFER: ' + ', '.join(bad), f'({len(a)} files, {sum(map(len, a.values()))} bytes)')
sys.exit(1 if bad else 0)
