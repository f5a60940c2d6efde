#!/usr/bin/python3
"""check_malformed.py — `addsite canon` must reject every SMILES in tests/data/malformed.tsv cleanly.

Expectations come from the OpenSMILES specification and common practice (the source column of
the table). For each broken SMILES it checks: no crash (exit status 1, not a signal, no sanitizer
report on stderr), exactly one empty output line per input line, and an error line
`addsite canon: line N, column C: CODE: MESSAGE` with the expected CODE and C = offset + 1,
followed by two lines (the text and a caret under column C).
All table rows go through one process on stdin; rows containing CR or LF bytes and the
generated over-long input (1,000,001 bytes; code limit) run as separate processes.
Environment: ADDSITE (binary), AS_SOURCE_DIR (source tree). Last line: "N passed, M failed".
"""
import os
import re
import subprocess
import sys

ERR_RE = re.compile(rb'^addsite canon: line (\d+), column (\d+): (\w+): (.*)$')
SANITIZER_RE = re.compile(rb'AddressSanitizer|LeakSanitizer|runtime error:|Segmentation fault')
LONG_LEN = 1000001          # one byte over AS_SMILES_MAX_LEN (include/addsite/smiles.h)
LONG_OFFSETS = (1000000, 0)  # first byte past the limit; 0 also accepted (whole input too long)


def decode(field):
    return re.sub(rb'\\x([0-9a-fA-F]{2})', lambda m: bytes([int(m.group(1), 16)]),
                  field.encode('ascii'))


def load(path):
    rows = []
    with open(path, encoding='ascii') as fh:
        for line in fh:
            line = line.rstrip('\n')
            if not line or line.startswith('#') or line.startswith('smiles\t'):
                continue
            smi, code, off, what, src = line.split('\t')
            rows.append({'text': smi, 'raw': decode(smi), 'code': code, 'offsets': (int(off),),
                         'what': what, 'src': src})
    return rows


def run(binary, raws):
    data = b''.join(r + b'\n' for r in raws)
    try:
        proc = subprocess.run([binary, 'canon'], input=data, stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE, timeout=60)
    except subprocess.TimeoutExpired:
        return None, b'', b''
    return proc.returncode, proc.stdout, proc.stderr


def check_batch(binary, rows):
    """Runs rows through one process; returns a list of failure messages per row."""
    rc, out, err = run(binary, [r['raw'] for r in rows])
    problems = [[] for _ in rows]
    general = []
    if rc is None:
        return ['no answer within 60 s (hang?)'], [['timed out'] for _ in rows]
    if rc < 0:
        general.append('killed by signal %d' % -rc)
    elif rc != 1:
        general.append('exit status %d, expected 1' % rc)
    if SANITIZER_RE.search(err):
        general.append('sanitizer or crash report on stderr')
    lines = out.split(b'\n')
    if lines and lines[-1] == b'':
        lines.pop()
    if len(lines) != len(rows):
        general.append('%d output lines for %d input lines' % (len(lines), len(rows)))
    for i, r in enumerate(rows):
        if i < len(lines) and lines[i] != b'':
            problems[i].append('accepted: output %r' % lines[i][:80])
    errs = {}
    elines = err.split(b'\n')
    for k, l in enumerate(elines):
        m = ERR_RE.match(l)
        if m:
            n = int(m.group(1))
            show = elines[k + 1] if k + 1 < len(elines) else b''
            caret = elines[k + 2] if k + 2 < len(elines) else b''
            errs.setdefault(n, (int(m.group(2)), m.group(3).decode(), m.group(4), show, caret))
    for i, r in enumerate(rows):
        got = errs.get(i + 1)
        if got is None:
            problems[i].append('no error line for line %d' % (i + 1))
            continue
        col, code, msg, show, caret = got
        want_cols = [o + 1 for o in r['offsets']]
        if code != r['code'] or col not in want_cols:
            problems[i].append('got %s at column %d (%s), expected %s at column %s' %
                               (code, col, msg.decode('utf-8', 'replace')[:80], r['code'],
                                '/'.join(map(str, want_cols))))
        if b'^' not in caret:
            problems[i].append('no caret line after the error line')
        elif r['raw'].isascii() and r['raw'] in show and len(r['raw']) < 200 and \
                all(32 < c < 127 for c in r['raw']):
            where = caret.index(b'^') - show.index(r['raw']) + 1
            if where != col:
                problems[i].append('caret under column %d, error line says %d' % (where, col))
    return general, problems


def main():
    binary = os.environ.get('ADDSITE')
    src = os.environ.get('AS_SOURCE_DIR', os.path.join(os.path.dirname(__file__), '..'))
    if not binary or not os.access(binary, os.X_OK):
        print('ADDSITE is not set to an executable addsite binary')
        print('0 passed, 1 failed')
        return 1
    rows = load(os.path.join(src, 'tests', 'data', 'malformed.tsv'))
    batch = [r for r in rows if b'\n' not in r['raw'] and b'\r' not in r['raw']]
    alone = [r for r in rows if r not in batch]
    long_row = {'text': '<%d x C>' % LONG_LEN, 'raw': b'C' * LONG_LEN, 'code': 'limit',
                'offsets': LONG_OFFSETS, 'what': 'SMILES longer than the 1,000,000-byte limit',
                'src': 'common practice'}
    alone.append(long_row)

    results = []   # (row, [problems])
    general_all = []
    general, problems = check_batch(binary, batch)
    general_all += ['batch: ' + g for g in general]
    results += list(zip(batch, problems))
    for r in alone:
        general, problems = check_batch(binary, [r])
        general_all += ['%s: %s' % (r['text'][:20], g) for g in general]
        results += list(zip([r], problems))

    passed = sum(1 for _, p in results if not p)
    failed = len(results) - passed
    print('check_malformed: %d broken SMILES (%d in one batch, %d run alone)' %
          (len(results), len(batch), len(alone)))
    for g in general_all:
        print('FATAL: ' + g)
    by_code = {}
    for r, p in results:
        by_code.setdefault(r['code'], [0, 0])[0 if not p else 1] += 1
    for code in sorted(by_code):
        print('  %-12s %3d passed, %3d failed' % (code, by_code[code][0], by_code[code][1]))
    for r, p in results:
        if p:
            print('FAIL %-28s %s' % (r['text'][:28], '; '.join(p)))
            print('     (%s)' % r['what'])
    if general_all:
        failed = max(failed, 1)
    print('%d passed, %d failed' % (passed, failed))
    return 1 if failed else 0


if __name__ == '__main__':
    sys.exit(main())
