#!/usr/bin/python3
"""check_smiles_cases.py — SMILES pitfalls that `addsite canon` must read, with stated results.

Cases are in tests/data/smiles_cases.tsv (kinds same / differ / hcount / formula; the header of
that file explains them). Reference: RDKit (Debian python3-rdkit, run with /usr/bin/python3) reads
addsite's output to check identity, H counts and formulas; rows marked rdkit=yes are also checked
against RDKit on the input itself, so a wrong table row shows up as a "table" failure.
Three generated inputs test the size limits listed as user pitfalls (common practice):
100 nested branches, a 100,000-atom chain and 1000 rings that reuse ring number 1. RDKit is far
too slow on the last two, so their outputs are checked by counting atoms in the text and by
idempotence (canon of the output gives the output again).
Environment: ADDSITE (binary), AS_SOURCE_DIR (source tree). Last line: "N passed, M failed".
"""
import os
import re
import subprocess
import sys

from rdkit import Chem, RDLogger
from rdkit.Chem.rdMolDescriptors import CalcMolFormula

RDLogger.DisableLog('rdApp.*')

ERR_RE = re.compile(r'^addsite canon: line (\d+), column (\d+): (\w+): (.*)$')
SANITIZER_RE = re.compile(r'AddressSanitizer|LeakSanitizer|runtime error:|Segmentation fault')


def rd_mol(smi):
    if not smi:
        return None
    return Chem.MolFromSmiles(smi)


def rd_canon(smi):
    m = rd_mol(smi)
    return Chem.MolToSmiles(m) if m is not None else None


def rd_hcount(smi):
    """Total H (implicit, bracket counts and H atoms); tolerant of valences RDKit rejects."""
    m = rd_mol(smi)
    if m is None:
        m = Chem.MolFromSmiles(smi, sanitize=False) if smi else None
        if m is None:
            return None
        m.UpdatePropertyCache(strict=False)
    return sum(a.GetTotalNumHs() for a in m.GetAtoms()) + \
        sum(1 for a in m.GetAtoms() if a.GetAtomicNum() == 1)


def rd_formula(smi):
    m = rd_mol(smi)
    return CalcMolFormula(m) if m is not None else None


def load(path):
    rows = []
    with open(path, encoding='ascii') as fh:
        for line in fh:
            line = line.rstrip('\n')
            if not line or line.startswith('#') or line.startswith('smiles\t'):
                continue
            smi, kind, exp, rdk, src = line.split('\t')
            rows.append({'smiles': smi, 'kind': kind, 'expected': exp, 'rdkit': rdk == 'yes',
                         'source': src})
    return rows


def run_canon(binary, lines):
    data = ''.join(l + '\n' for l in lines).encode('ascii')
    try:
        proc = subprocess.run([binary, 'canon'], input=data, stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE, timeout=120)
    except subprocess.TimeoutExpired:
        return None, {}, None, 'timed out after 120 s'
    out = proc.stdout.decode('utf-8', 'replace').split('\n')
    if out and out[-1] == '':
        out.pop()
    out = [o.split('\t', 1)[0] for o in out]
    err = proc.stderr.decode('utf-8', 'replace')
    errors = {}
    for l in err.split('\n'):
        m = ERR_RE.match(l)
        if m:
            errors[int(m.group(1))] = '%s at column %s: %s' % (m.group(3), m.group(2), m.group(4))
    return out, errors, proc.returncode, err


def table_check(r):
    """Does RDKit agree with the row on the input itself? Returns a message or None."""
    s, e, k = r['smiles'], r['expected'], r['kind']
    if k == 'same':
        ok = rd_canon(s) is not None and rd_canon(s) == rd_canon(e)
    elif k == 'differ':
        ok = rd_canon(s) is not None and rd_canon(e) is not None and rd_canon(s) != rd_canon(e)
    elif k == 'hcount':
        ok = rd_hcount(s) == int(e)
    elif k == 'formula':
        ok = rd_formula(s) == e
    else:
        return 'unknown kind %r' % k
    return None if ok else 'RDKit on the input disagrees with the table row'


def main():
    binary = os.environ.get('ADDSITE')
    src = os.environ.get('AS_SOURCE_DIR', os.path.join(os.path.dirname(__file__), '..'))
    if not binary or not os.access(binary, os.X_OK):
        print('ADDSITE is not set to an executable addsite binary')
        print('0 passed, 1 failed')
        return 1
    rows = load(os.path.join(src, 'tests', 'data', 'smiles_cases.tsv'))

    # One process for every input and expected SMILES of the table.
    feed = []
    for r in rows:
        r['i_s'] = len(feed)
        feed.append(r['smiles'])
        if r['kind'] in ('same', 'differ'):
            r['i_e'] = len(feed)
            feed.append(r['expected'])
    out, errors, rc, err = run_canon(binary, feed)
    fatal = []
    if out is None:
        fatal.append(err)
        out = [''] * len(feed)
    else:
        if rc not in (0, 1):
            fatal.append('exit status %d (signal or usage error)' % rc)
        if SANITIZER_RE.search(err):
            fatal.append('sanitizer or crash report on stderr')
        if len(out) != len(feed):
            fatal.append('%d output lines for %d input lines' % (len(out), len(feed)))
            out += [''] * (len(feed) - len(out))

    results = []   # (label, problem or None)
    for r in rows:
        label = '%s %s %s' % (r['smiles'], r['kind'], r['expected'])
        probs = []
        if r['rdkit']:
            t = table_check(r)
            if t:
                probs.append('table: ' + t)
        got = out[r['i_s']]
        if got == '':
            probs.append('rejected: %s' % errors.get(r['i_s'] + 1, 'empty output'))
        elif r['kind'] == 'same':
            got_e = out[r['i_e']]
            if got != got_e:
                probs.append('addsite gives %s for the input but %s for %s' %
                             (got, got_e or '(error: %s)' % errors.get(r['i_e'] + 1, '?'),
                              r['expected']))
            if r['rdkit'] and rd_canon(got) != rd_canon(r['expected']):
                probs.append('addsite output %s is %s for RDKit, expected %s' %
                             (got, rd_canon(got), rd_canon(r['expected'])))
        elif r['kind'] == 'differ':
            got_e = out[r['i_e']]
            if got_e == '':
                probs.append('expected-side SMILES %s rejected: %s' %
                             (r['expected'], errors.get(r['i_e'] + 1, 'empty output')))
            elif got == got_e:
                probs.append('addsite gives the same %s for both' % got)
        elif r['kind'] == 'hcount':
            h = rd_hcount(got)
            if h != int(r['expected']):
                probs.append('addsite output %s has %s H for RDKit, expected %s' %
                             (got, h, r['expected']))
        elif r['kind'] == 'formula':
            f = rd_formula(got)
            if f != r['expected']:
                probs.append('addsite output %s has formula %s for RDKit, expected %s' %
                             (got, f, r['expected']))
        results.append((label, probs, r['source']))

    # Size limits (generated).
    nested = 'C' + '(C' * 100 + ')' * 100
    chain = 'C' * 100000
    rings = 'C1CC1' * 1000
    o, e, rc2, err2 = run_canon(binary, [nested, chain, rings])
    if o is None or rc2 not in (0, 1) or SANITIZER_RE.search(err2 or ''):
        fatal.append('size-limit run: %s' % (err2 if o is None else 'exit %s or crash report' % rc2))
        o = ['', '', '']
    o += [''] * (3 - len(o))
    lim = []
    f = rd_formula(o[0])
    lim.append(('100 nested branches formula C101H204',
                [] if f == 'C101H204' else ['got %s (%s)' % (f, e.get(1, o[0][:60]))]))
    for idx, name, n_atoms in ((1, '100,000-atom chain', 100000), (2, '1000 reused ring 1', 3000)):
        txt = o[idx]
        probs = []
        if txt == '':
            probs.append('rejected: %s' % e.get(idx + 1, 'empty output'))
        elif re.search(r'[^C()0-9%]', txt) or txt.count('C') != n_atoms:
            probs.append('output is not %d aliphatic carbons: %s...' % (n_atoms, txt[:60]))
        lim.append((name, probs))
    # Idempotence on the big outputs.
    if o[1] and o[2]:
        o2, _, _, _ = run_canon(binary, [o[1], o[2]])
        if o2 is None or o2[:2] != [o[1], o[2]]:
            lim.append(('idempotence of the large outputs', ['canon(canon(x)) != canon(x)']))
    results += [(n, p, 'common practice: size limits') for n, p in lim]

    passed = sum(1 for _, p, _ in results if not p)
    failed = len(results) - passed
    print('check_smiles_cases: %d cases (%d from the table, %d generated)' %
          (len(results), len(rows), len(results) - len(rows)))
    for msg in fatal:
        print('FATAL: ' + msg)
    for label, probs, source in results:
        if probs:
            print('FAIL %s\n     %s\n     (source: %s)' % (label, '; '.join(probs), source))
    if fatal:
        failed = max(failed, 1)
    print('%d passed, %d failed' % (passed, failed))
    return 1 if failed else 0


if __name__ == '__main__':
    sys.exit(main())
