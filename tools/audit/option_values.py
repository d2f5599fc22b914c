#!/usr/bin/env python3
"""Option-value audit: every value-taking option of every command, given values a user who
mistypes would give (0, -1, huge, 1e400, 2.5, NaN, Infinity, empty, a word, values beyond the data,
wrong-case enums, bad layers / --where / --rows), the option twice, a required option left out and
mutually exclusive options together.

For each case it records the exit code, the first line of stderr, whether stdout is empty on
failure and, for commands that open an index, whether the index folder is byte for byte the same
afterwards (an index changed by a successful run is restored from a pristine copy). It then flags:
exit 1 or a stack trace, a refusal that changed the index, a refusal with output on stdout, a
refusal whose message names neither the option nor the value, and acceptances of values that look
absurd (to review by hand: many are documented, e.g. --threads 0).

Usage: tools/audit/option_values.py [WORKDIR] [--only SUBSTRING]   (numpy; the jar from bin/actindex)
WORKDIR (default /tmp/optfuzz) gets the demo (made once), fixtures, cases.tsv, results.jsonl and
report.md. Cases run in one JVM through tools/audit/OptionValuesRunner.java (Main.run in-process).
"""
import json
import os
import shutil
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
WORK = sys.argv[1] if len(sys.argv) > 1 and not sys.argv[1].startswith('--') else '/tmp/optfuzz'
ONLY = sys.argv[sys.argv.index('--only') + 1] if '--only' in sys.argv else None
DEMO = f'{WORK}/demo'
FX = f'{WORK}/fx'
IDX = f'{WORK}/idx'          # the index the cases run on
PRISTINE = f'{WORK}/pristine'  # its copy, restored after a change
IDX_CODE = f'{WORK}/idx-code'  # the same with a code-score calibration (export-edge needs one)
PRISTINE_CODE = f'{WORK}/pristine-code'
OUT = f'{WORK}/out'          # output files of the cases

# What a mistyping user gives where a number is expected.
NUMBERS = ['0', '-1', '-3', '99999999999', '1e400', '2.5', 'NaN', 'Infinity', '', 'word', '0x10', ' 3']
LAYERS = ['nosuch', '7', '-1', '0,0', '0,', ',', '', '2,0', ' 0', '0;2', 'all', '0,2,0']
WHERE = ['split = ', 'nosuchfield = x', "label = 'unterminated", 'label = "unterminated',
         'label = "nörmal ☃"', 'split = train and', '((split = train)', 'label ~ x', 'ü = 1',
         'split == train', 'SPLIT = train', 'week > ten', 'week > 1e400', 'week > NaN', '', ' ',
         "split = 'train' or", 'not']
ROWS = ['0', '-1', '99999999999', '1e400', '2.5', 'NaN', '', 'word', '5:2', '0:0', '600:700',
        '599:99999', ':', '-2:', '0:-1', '2.5:3', '0:3:5', ' 1:2', '1 : 2']
FORMATS = ['JSON', 'Json', 'CSV', 'xml', '', 'json ', 'tabel']
HEADER = ['YES', 'No', 'maybe', '', 'true', '1']
PATHS = ['', 'nosuchfile.npy', ' ']


def fixtures():
    import numpy as np
    if not os.path.isdir(DEMO):
        subprocess.run([f'{ROOT}/bin/actindex', 'demo', '--out', DEMO], check=True,
                       stdout=subprocess.DEVNULL)
    os.makedirs(FX, exist_ok=True)
    if os.path.exists(OUT):
        shutil.rmtree(OUT)
    os.makedirs(OUT)
    w = np.load(f'{DEMO}/windows.npy')
    np.save(f'{FX}/small.npy', w[:500])
    lines = open(f'{DEMO}/windows.csv').read().splitlines()
    open(f'{FX}/small.csv', 'w').write('\n'.join(lines[:501]) + '\n')
    rows = [l.replace('w-', 'n-', 1) for l in lines[1:501]]
    open(f'{FX}/add.csv', 'w').write('\n'.join([lines[0]] + rows) + '\n')
    rng = np.random.default_rng(1)
    np.save(f'{FX}/codes192.npy', rng.integers(0, 2, (5, 192)).astype(bool))
    np.save(f'{FX}/codes_small.npy', rng.integers(0, 2, (300, 40)).astype(bool))
    np.save(f'{FX}/acts.npy', rng.normal(size=(300, 40)).astype(np.float32))
    open(f'{FX}/keys.txt', 'w').write('w-00001\n')
    for d in (IDX, PRISTINE, IDX_CODE, PRISTINE_CODE):
        if os.path.exists(d):
            shutil.rmtree(d)
    shutil.copytree(f'{DEMO}/index', PRISTINE)
    shutil.copytree(f'{DEMO}/index', IDX)
    shutil.copytree(f'{DEMO}/index', PRISTINE_CODE)
    subprocess.run([f'{ROOT}/bin/actindex', 'ood', 'calibrate', '--index', PRISTINE_CODE, '--inputs',
                    f'{DEMO}/calibration.npy', '--score', 'code'], check=True, stdout=subprocess.DEVNULL)
    shutil.copytree(PRISTINE_CODE, IDX_CODE)


def D(name):
    return f'{DEMO}/{name}'


def F(name):
    return f'{FX}/{name}'


# Per command: a valid base line (fast on the demo), whether it writes the index, and its
# value-taking options: name -> (kind, valid value, extra values beyond the data).
def commands():
    q = ['--inputs', D('incoming.npy')]
    nb = 0

    def build_out():
        nonlocal nb
        nb += 1
        return f'{OUT}/build-{nb}'

    C = {}
    C['build'] = dict(
        base=lambda: ['build', '--out', build_out(), '--model', D('model.safetensors'), '--inputs', F('small.npy'),
                      '--meta', F('small.csv')],
        index=False,
        opts={'--threads': ('int', '1', ['-3', '100000']),
              '--magnitudes': ('enum', '4', ['1', '3', '16', 'OFF', 'Off', '08']),
              '--layers': ('layers', '0', []),
              '--layer-order': ('layers', '0,2,4', ['4,2,0', '0,2', '0,2,4,4', 'x,y,z']),
              '--key-column': ('name', 'key', ['nosuch', 'label', 'KEY']),
              '--label-column': ('name', 'label', ['nosuch', 'key', 'LABEL']),
              '--split-column': ('name', 'split', ['nosuch', 'week', 'SPLIT']),
              '--format': ('format', 'json', []),
              '--meta': ('path', F('small.csv'), []),
              '--out': ('outdir', None, []),
              '--header': ('header', 'auto', [])})
    C['build-acts'] = dict(
        base=lambda: ['build', '--out', build_out(), '--activations', F('acts.npy')],
        index=False,
        opts={'--threshold': ('double', '0.5', ['-Infinity', '1e308', '-0', '1e-400', '0,5']),
              '--header': ('header', 'auto', [])})
    C['build-codes'] = dict(
        base=lambda: ['build', '--out', build_out(), '--codes', F('codes_small.npy')],
        index=False,
        opts={'--code-layout': ('layout', 'a:20,b:20',
                                ['a:20,b:30', 'a:0,b:40', 'a:-5,b:45', 'a:20,a:20', 'a:20,b', ':40', 'a:2.5,b:37.5',
                                 'a:40,', 'a 40', 'a:99999999999', 'a:1e400', 'a:NaN', 'a:40:1'])})
    C['add'] = dict(
        base=lambda: ['add', '--index', IDX, '--inputs', F('small.npy'), '--meta', F('add.csv')],
        index=True,
        opts={'--threads': ('int', '1', ['-3']),
              '--key-column': ('name', 'key', ['nosuch', 'KEY']),
              '--label-column': ('name', 'label', ['nosuch']),
              '--split-column': ('name', 'split', ['nosuch']),
              '--format': ('format', 'json', []),
              '--code-layout': ('layout', '0:128,2:64', ['code:192', '0:64,2:128'])})
    C['info'] = dict(base=lambda: ['info', '--index', IDX], index=True,
                     opts={'--format': ('format', 'json', []), '--index': ('path', None, [])})
    C['nearest'] = dict(
        base=lambda: ['nearest', '--index', IDX] + q + ['--rows', '0:2', '-k', '3'],
        index=True,
        opts={'-k': ('int', '3', ['19800', '19801', '100000', '2147483647', '-2147483648']),
              '--rows': ('rows', '0:2', []),
              '--layers': ('layers', '0', []),
              '--where': ('where', 'split = train', []),
              '--threads': ('int', '2', ['-3', '100000']),
              '--vote-ties': ('enum', 'exclude', ['EXCLUDE', 'none', 'yes']),
              '--format': ('format', 'json', []),
              '--header': ('header', 'auto', [])})
    C['nearest-refine'] = dict(
        base=lambda: ['nearest', '--index', IDX] + q + ['--rows', '0:2', '-k', '3', '--refine'],
        index=True,
        opts={'--candidates': ('int', '10', ['1', '2', '19800', '100000', '2147483647']),
              '--refine': ('enum', 'euclidean', ['COSINE', 'Euclidean', 'hamming', 'l2'])})
    C['region'] = dict(
        base=lambda: ['region', '--index', IDX] + q + ['--rows', '0:2'],
        index=True,
        opts={'--radius': ('int', '2', ['128', '192', '193', '1000', '2147483647']),
              '--examples': ('int', '3', ['100000', '2147483647']),
              '--rows': ('rows', '0:2', []),
              '--layers': ('layers', '0', []),
              '--where': ('where', 'split = train', []),
              '--format': ('format', 'json', [])})
    C['census'] = dict(
        base=lambda: ['census', '--index', IDX],
        index=True,
        opts={'--examples': ('int', '3', ['100000', '2147483647']),
              '--largest': ('int', '5', ['100000', '2147483647']),
              '--layers': ('layers', '0', []),
              '--format': ('format', 'json', [])})
    C['compare'] = dict(
        base=lambda: ['compare', '--index', IDX, '--kind', 'inputs', '--a', D('week47-first-half.npy'), '--b',
                      D('week47-second-half.npy'), '--permutations', '50'],
        index=True,
        opts={'--alpha': ('double', '0.05', ['1', '1.5', '-Infinity']),
              '--exact-max': ('int', '3000', ['1', '2147483647']),
              '--matrix-rows': ('int', '500', ['1', '2', '2147483647']),
              '--max-iter': ('int', '100', ['1']),
              '--permutations': ('int', '50', ['1', '2']),
              '--reg': ('double', '0.05', ['1e-300', '1000']),
              '--seed': ('long', '42', ['9223372036854775807', '-9223372036854775808', '9223372036854775808']),
              '--sigma': ('double', '4', ['1e-300', '1e300', '-Infinity']),
              '--sinkhorn-rows': ('int', '100', ['1', '2']),
              '--threads': ('int', '2', ['-3', '100000']),
              '--tol': ('double', '1e-5', ['1e300']),
              '--top': ('int', '10', ['100000', '2147483647']),
              '--layers': ('layers', '0', []),
              '--kind': ('enum', 'inputs', ['INPUTS', 'Activations', 'input', 'floats']),
              '--format': ('format', 'json', [])})
    C['compare-where'] = dict(
        base=lambda: ['compare', '--index', IDX, '--a-where', 'split = train and week = 28', '--b-where',
                      'split = test and week = 28', '--permutations', '20'],
        index=True,
        opts={'--a-where': ('where', 'split = train and week = 28', ['week = 99999']),
              '--b-where': ('where', 'split = test and week = 28', [])})
    C['compare-noindex'] = dict(
        base=lambda: ['compare', '--kind', 'activations', '--a', F('acts.npy'), '--b', F('acts.npy'),
                      '--permutations', '20'],
        index=False,
        opts={'--threshold': ('double', '0.5', ['-Infinity', '1e308']),
              '--code-layout': ('layout', 'a:20,b:20', ['a:20,b:30', 'a:0,b:40'])})
    C['fidelity'] = dict(
        base=lambda: ['fidelity', '--index', IDX, '--queries', '50', '--pairs', '500'],
        index=True,
        opts={'-k': ('int', '10', ['19799', '19800', '100000', '2147483647']),
              '--candidates': ('int', '100', ['1', '19800', '2147483647']),
              '--pairs': ('int', '500', ['1', '2147483647']),
              '--queries': ('int', '50', ['1', '19800', '100000', '2147483647']),
              '--seed': ('long', '1', ['9223372036854775808']),
              '--threads': ('int', '2', ['-3', '100000']),
              '--format': ('format', 'json', [])})
    C['fidelity-acts'] = dict(
        base=lambda: ['fidelity', '--activations', F('acts.npy'), '--queries', '50', '--pairs', '500'],
        index=False,
        opts={'-k': ('int', '10', ['299', '300', '100000']),
              '--magnitudes': ('enum', '4', ['1', '3', '16', 'off'])})
    C['dupes'] = dict(
        base=lambda: ['dupes', '--index', IDX, '--radius', '1', '--groups', '3'],
        index=True,
        opts={'--radius': ('int', '1', ['128', '192', '193', '2147483647']),
              '--groups': ('int', '3', ['100000', '2147483647']),
              '--threads': ('int', '2', ['-3', '100000']),
              '--where': ('where', 'split = train', []),
              '--layers': ('layers', '0', []),
              '--format': ('format', 'json', []),
              '--pairs': ('path', f'{OUT}/pairs.csv', [IDX + '/pairs.csv', OUT])})
    C['dupes-against'] = dict(
        base=lambda: ['dupes', '--index', IDX, '--radius', '1', '--against', D('incoming.npy')],
        index=True,
        opts={'--kind': ('enum', 'inputs', ['INPUTS', 'codes', 'input']),
              '--radius': ('int', '1', ['193', '2147483647'])})
    C['ood calibrate'] = dict(
        base=lambda: ['ood', 'calibrate', '--index', IDX, '--inputs', D('calibration.npy'), '--rows', '0:300'],
        index=True,
        opts={'-k': ('int', '1', ['19800', '19801', '100000', '2147483647']),
              '--candidates': ('int', '100', ['1', '2147483647']),
              '--rows': ('rows', '0:300', ['0:1', '1999:2000', '2000:']),
              '--score': ('enum', 'code', ['CODE', 'Refined', 'cosine']),
              '--statistic': ('enum', 'mean', ['KTH', 'Mean', 'median']),
              '--threads': ('int', '2', ['-3', '100000']),
              '--tpr': ('double', '0.9', ['1', '1.5', '0.0001', '0.9999999', '95', '-Infinity']),
              '--layers': ('layers', '0', []),
              '--format': ('format', 'json', [])})
    C['ood score'] = dict(
        base=lambda: ['ood', 'score', '--index', IDX] + q + ['--rows', '0:3'],
        index=True,
        opts={'--evidence': ('int', '1', ['2', '100000']),
              '--rows': ('rows', '0:3', []),
              '--score': ('enum', 'euclidean', ['EUCLIDEAN', 'code']),  # the demo's calibration: the default with kept magnitudes
              '--threads': ('int', '2', ['-3', '100000']),
              '--format': ('format', 'json', [])})
    C['ood eval'] = dict(
        base=lambda: ['ood', 'eval', '--index', IDX, '--in', D('incoming-ordinary.npy'), '--out',
                      D('incoming-odd.npy')],
        index=True,
        opts={'--candidates': ('int', '100', ['1', '2147483647']),
              '--kind': ('enum', 'inputs', ['INPUTS', 'codes', 'input']),
              '--score': ('enum', 'euclidean', ['EUCLIDEAN', 'code']),  # the demo's calibration: the default with kept magnitudes
              '--threads': ('int', '2', ['-3', '100000']),
              '--roc': ('path', f'{OUT}/roc.csv', [IDX + '/roc.csv', OUT, D('incoming-odd.npy')]),
              '--html': ('path', f'{OUT}/eval.html', [IDX + '/eval.html', OUT]),
              '--format': ('format', 'json', [])})
    C['export-edge'] = dict(
        base=lambda: ['export-edge', '--index', IDX_CODE, '--out', f'{OUT}/edge.bin'],
        index=(IDX_CODE, PRISTINE_CODE),
        opts={'--out': ('path', f'{OUT}/edge.bin', [IDX_CODE + '/edge.bin', OUT]),
              '--c-source': ('path', OUT, [IDX_CODE, f'{OUT}/nosuchdir']),
              '--format': ('format', 'json', [])})
    C['report'] = dict(
        base=lambda: ['report', '--index', IDX, '--out', f'{OUT}/report.html'],
        index=True,
        opts={'--dupes-radius': ('int', '1', ['192', '193', '2147483647']),
              '--threads': ('int', '2', ['-3', '100000']),
              '--title': ('text', 'T', ['<script>alert(1)</script>', 'x' * 5000, 'Ünïcode ☃']),
              '--out': ('path', f'{OUT}/report.html', [IDX + '/r.html', OUT]),
              '--format': ('format', 'json', [])})
    C['report-compare'] = dict(
        base=lambda: ['report', '--index', IDX, '--out', f'{OUT}/report2.html', '--compare-a', D('week47.npy'),
                      '--compare-b', D('week48.npy')],
        index=True,
        opts={'--compare-kind': ('enum', 'inputs', ['INPUTS', 'codes', 'input'])})
    C['delete'] = dict(
        base=lambda: ['delete', '--index', IDX, '--where', 'key = w-00001'],
        index=True,
        opts={'--where': ('where', 'key = w-00001', ['key = nosuch', 'split = train or split != train']),
              '--keys': ('path', F('keys.txt'), []),
              '--format': ('format', 'json', [])})
    C['compact'] = dict(
        base=lambda: ['compact', '--index', IDX],
        index=True,
        opts={'--threads': ('int', '1', ['-3', '100000']),
              '--format': ('format', 'json', [])})
    C['check'] = dict(base=lambda: ['check', '--index', IDX], index=True,
                      opts={'--format': ('format', 'json', [])})
    C['calibrate-planner'] = dict(
        base=lambda: ['calibrate-planner', '--out', f'{OUT}/costs.properties', '--runs', '1'],
        index=False,
        opts={'--runs': ('int', '1', ['100', '101']),
              '--out': ('path', f'{OUT}/costs.properties', [IDX + '/costs.properties', OUT]),
              '--format': ('format', 'json', [])})
    C['demo'] = dict(
        base=lambda: ['demo', '--out', f'{OUT}/demo'],
        index=False,
        opts={'--seed': ('long', '7', ['9223372036854775808'])})
    return C


GENERIC = {'int': NUMBERS, 'long': NUMBERS, 'double': NUMBERS + ['-NaN', 'inf', '1e-5'],
           'layers': LAYERS, 'where': WHERE, 'rows': ROWS, 'format': FORMATS, 'header': HEADER,
           'enum': ['', 'word'], 'name': ['', ' '], 'path': PATHS, 'outdir': ['', ' ', 'new-index-here'], 'layout': ['', 'word'], 'text': ['']}


def set_option(args, opt, value):
    """args with opt set to value (replacing a value already there, else appended)."""
    a = list(args)
    if opt in a:
        i = a.index(opt)
        if i + 1 < len(a) and not a[i + 1].startswith('--'):
            a[i + 1] = value
            return a
        a[i] = f'{opt}={value}'  # a flag with an optional value (--refine)
        return a
    return a + [opt, value]


def dirs(spec):
    """The folder a command's cases hash and its pristine copy ('-' when it opens no index)."""
    if spec['index'] is True:
        return IDX, PRISTINE
    return spec['index'] if spec['index'] else ('-', '-')


def cases():
    out = []
    for cmd, spec in commands().items():
        if ONLY and ONLY not in cmd:
            continue
        index_dir, pristine = dirs(spec)
        out.append((f'{cmd} | (base) |', index_dir, pristine, spec['base']()))
        for opt, (kind, valid, extra) in spec['opts'].items():
            for v in GENERIC[kind] + extra:
                out.append((f'{cmd} | {opt} | {v!r}', index_dir, pristine, set_option(spec['base'](), opt, v)))
            if valid is not None:
                a = set_option(spec['base'](), opt, valid)
                out.append((f'{cmd} | {opt} | twice', index_dir, pristine, a + [opt, valid]))
        # each required option left out
        base = spec['base']()
        for req in ('--index', '--out', '--radius', '--in'):
            if req in base:
                i = base.index(req)
                out.append((f'{cmd} | {req} | missing', index_dir, pristine, base[:i] + base[i + 2:]))
    X = [('build', ['--activations', F('acts.npy'), '--codes', F('codes_small.npy')], 'build-acts'),
         ('build', ['--median', '--threshold', '0.5'], 'build-acts'),
         ('nearest', ['--codes', F('codes192.npy')], 'nearest'),
         ('nearest', ['--vote-ties', 'exclude'], 'nearest-refine'),
         ('delete', ['--keys', F('keys.txt')], 'delete'),
         ('calibrate-planner', ['--dry-run'], 'calibrate-planner'),
         ('ood score', ['--decision-only', '--evidence', '2'], 'ood score'),
         ('ood score', ['--decision-only', '--score', 'euclidean'], 'ood score'),
         ('dupes', ['--groups', '2'], 'dupes-against'),
         ('dupes', ['--cross-split'], 'dupes-against'),
         ('compare', ['--a-where', 'split = train'], 'compare'),
         ('compare', ['--median', '--threshold', '0.5'], 'compare-noindex'),
         ('fidelity', ['--activations', F('acts.npy')], 'fidelity'),
         ('ood calibrate', ['--score', 'code', '--candidates', '50'], 'ood calibrate'),
         ('nearest', ['--candidates', '50'], 'nearest'),
         ('region', ['--codes', F('codes192.npy')], 'region')]
    C = commands()
    for name, extra, which in X:
        if ONLY and ONLY not in which:
            continue
        spec = C[which]
        out.append((f'{which} | exclusive | {" ".join(x for x in extra if not x.startswith("/"))}',
                    *dirs(spec), spec['base']() + extra))
    return out


def flags(case, r):
    _, opt, value = [s.strip() for s in case.split('|', 2)]
    err = r['stderr']
    first = err.strip().splitlines()[0] if err.strip() else ''
    f = []
    if r['exit'] == 'timeout':
        f.append('TIMEOUT')
    if r['exit'] == 1:
        f.append('EXIT1')
    if 'Exception' in err or '\tat ' in err:
        f.append('TRACE')
    if r['exit'] != 0 and r['unchanged'] is False:
        f.append('INDEX-CHANGED')
    if r['exit'] not in (0, 'timeout') and r['stdout']:
        f.append('STDOUT-ON-FAILURE')
    if r['exit'] == 2 and opt not in ('(base)', 'exclusive') and value not in ('missing', 'twice'):
        v = value[1:-1] if value.startswith("'") else value
        names = [opt, opt.lstrip('-')]
        if not any(n in err for n in names) and (not v.strip() or v not in err):
            f.append('UNNAMED')
    if r['exit'] == 0 and value not in ('twice',) and opt not in ('(base)',):
        f.append('ACCEPTED')
    return f, first


def main():
    fixtures()
    cs = cases()
    with open(f'{WORK}/cases.tsv', 'w') as fh:
        for cid, d, p, args in cs:
            fh.write('\t'.join([cid, d, p] + args) + '\n')
    jar = f'{ROOT}/src-demo/target/actindex.jar'
    java = os.path.join(subprocess.check_output([f'{ROOT}/bin/find-jdk'], text=True).strip(), 'bin', 'java')
    results = []
    remaining = open(f'{WORK}/cases.tsv').read().splitlines()
    while remaining:
        # in OUT, so that relative names (nosuchfile.npy, ' ') land there; the machine's planner-costs
        # file is never written (calibrate-planner without --out writes the property's file)
        p = subprocess.run([java, '--add-modules', 'jdk.incubator.vector',
                            f'-Dactindex.planner.costs={OUT}/machine-planner-costs.properties', '-cp', jar,
                            f'{ROOT}/tools/audit/OptionValuesRunner.java', '120'],
                           input='\n'.join(remaining) + '\n', capture_output=True, text=True, cwd=OUT)
        got = [json.loads(l) for l in p.stdout.splitlines() if l.startswith('{')]
        results += got
        remaining = remaining[len(got):]
        if p.returncode not in (0, 3):
            sys.stderr.write(p.stderr)
            break
        if got and got[-1]['exit'] == 'timeout':
            shutil.rmtree(IDX)
            shutil.copytree(PRISTINE, IDX)
    with open(f'{WORK}/results.jsonl', 'w') as fh:
        for r in results:
            fh.write(json.dumps(r, ensure_ascii=False) + '\n')
    lines = ['| case | exit | stdout | index same | first stderr line | flags |', '|---|---|---|---|---|---|']
    counts = {}
    for r in results:
        f, first = flags(r['id'], r)
        for x in f:
            counts[x] = counts.get(x, 0) + 1
        lines.append(f"| {r['id']} | {r['exit']} | {r['stdout']} | {r['unchanged']} | {first[:160]} | {' '.join(f)} |")
    open(f'{WORK}/report.md', 'w').write('\n'.join(lines) + '\n')
    print(f'{len(results)} cases of {len(cs)}; flags: {counts}; table in {WORK}/report.md')


if __name__ == '__main__':
    main()
