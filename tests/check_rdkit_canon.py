#!/usr/bin/python3
"""check_rdkit_canon.py — checks `addsite canon` against RDKit on tests/data/canon_set.smi.

Reference: RDKit (Debian python3-rdkit, run with /usr/bin/python3). For every molecule of the set:
  (a) identity: addsite's canonical SMILES, read by RDKit, gives RDKit's canonical isomeric SMILES
      of the input (stereo included);
  (b) invariance: 5 randomised SMILES (20 for the hand-picked molecules; RDKit
      MolToRandomSmilesVect, seeded per molecule, so runs are reproducible) and 1 Kekule SMILES (Chem.Kekulize + kekuleSmiles=True) all give the same
      addsite canonical string as the set's SMILES; a variant that RDKit itself does not read back
      to the same molecule is not used (counted as "variants skipped");
  (c) idempotence: addsite canon of addsite's output is the same string (canon(canon(x)) ==
      canon(x), a common-practice requirement for canonical SMILES).
All SMILES go through one `addsite canon` process on stdin per pass (two passes).
Environment: ADDSITE (binary), AS_SOURCE_DIR (source tree), optional AS_CANON_LIMIT (first N
molecules only), optional AS_CANON_SEED (integer added to every seed, to explore other atom
orders; the default 0 is what ctest runs). Prints counts and up to 20 failures of each kind; last line "N passed, M failed";
exit status 1 when anything failed.
"""
import os
import re
import subprocess
import sys

from rdkit import Chem, RDLogger

RDLogger.DisableLog('rdApp.*')

N_RANDOM = 5          # randomised SMILES per molecule
N_RANDOM_HAND = 20    # per hand-picked molecule (the hard cases: symmetry, meso, ring systems)
SHOW = 20
ERR_RE = re.compile(r'^addsite canon: line (\d+), column (\d+): (\w+): (.*)$')
SANITIZER_RE = re.compile(r'AddressSanitizer|LeakSanitizer|runtime error:|Segmentation fault')


def rd_canon(smi):
    m = Chem.MolFromSmiles(smi) if smi else None
    return Chem.MolToSmiles(m) if m is not None else None


def load_set(path, limit):
    mols = []
    with open(path, encoding='ascii') as fh:
        for line in fh:
            line = line.rstrip('\n')
            if not line or line.startswith('#'):
                continue
            smi, _, rid = line.partition('\t')
            mols.append((smi, rid))
            if limit and len(mols) >= limit:
                break
    return mols


def variants(smi, seed, n_random):
    """Randomised and Kekule SMILES of smi that RDKit reads back to the same molecule."""
    mol = Chem.MolFromSmiles(smi)
    out = list(Chem.MolToRandomSmilesVect(mol, n_random, randomSeed=seed))
    kek = Chem.Mol(mol)
    try:
        Chem.Kekulize(kek, clearAromaticFlags=True)
        out.append(Chem.MolToSmiles(kek, kekuleSmiles=True))
    except Exception:  # noqa: BLE001 - RDKit raises a plain exception class
        pass
    good = [v for v in out if rd_canon(v) == smi]
    return good, len(out) - len(good)


def run_canon(binary, lines):
    """Runs one `addsite canon` process; returns (stdout lines, {line no: error text}, rc, stderr)."""
    data = ''.join(l + '\n' for l in lines).encode('ascii')
    proc = subprocess.run([binary, 'canon'], input=data, stdout=subprocess.PIPE,
                          stderr=subprocess.PIPE, timeout=600)
    out = proc.stdout.decode('utf-8', 'replace').split('\n')
    if out and out[-1] == '':
        out.pop()
    err_text = proc.stderr.decode('utf-8', 'replace')
    errors = {}
    for l in err_text.split('\n'):
        m = ERR_RE.match(l)
        if m:
            errors[int(m.group(1))] = '%s at column %s: %s' % (m.group(3), m.group(2), m.group(4))
    # The SMILES is always the first field (the CLI only adds a title when one was given).
    out = [o.split('\t', 1)[0] for o in out]
    return out, errors, proc.returncode, err_text


# Molecules whose failure is understood and accepted, with the reason. They are still run and
# their results printed, but do not fail the check.
KNOWN = {
    'hand:C60_fullerene': 'the smallest set of smallest rings holds 31 of the 32 faces; the '
                          'bonds the omitted hexagon shares with a pentagon are in no ring we '
                          'test for aromaticity, so they keep the Kekule orders the input had '
                          '(RDKit perceives the whole cage as aromatic)',
}


def main():
    binary = os.environ.get('ADDSITE')
    src = os.environ.get('AS_SOURCE_DIR', os.path.join(os.path.dirname(__file__), '..'))
    limit = int(os.environ.get('AS_CANON_LIMIT', '0') or 0)
    seed0 = int(os.environ.get('AS_CANON_SEED', '0') or 0)   # change to explore other orders
    if not binary or not os.access(binary, os.X_OK):
        print('ADDSITE is not set to an executable addsite binary')
        print('0 passed, 1 failed')
        return 1
    mols = load_set(os.path.join(src, 'tests', 'data', 'canon_set.smi'), limit)

    # Build the first pass: the set SMILES followed by its variants, remembering the layout.
    lines, layout, skipped = [], [], 0
    for i, (smi, rid) in enumerate(mols):
        n_random = N_RANDOM_HAND if rid.startswith('hand:') else N_RANDOM
        vs, bad = variants(smi, 7919 * (i + 1) + seed0, n_random)
        skipped += bad
        start = len(lines)
        lines.append(smi)
        lines.extend(vs)
        layout.append((start, len(vs)))

    out, errors, rc, err_text = run_canon(binary, lines)
    fatal = []
    if rc not in (0, 1):
        fatal.append('pass 1: exit status %d (signal or usage error)' % rc)
    if SANITIZER_RE.search(err_text):
        fatal.append('pass 1: sanitizer or crash report on stderr')
    if len(out) != len(lines):
        fatal.append('pass 1: %d output lines for %d input lines' % (len(out), len(lines)))
        out += [''] * (len(lines) - len(out))
    if rc == 0 and any(o == '' for o in out):
        fatal.append('pass 1: exit status 0 although some lines gave no output')

    # Second pass: idempotence on the outputs for the set SMILES.
    firsts = [out[start] for start, _ in layout]
    again, errors2, rc2, err_text2 = run_canon(binary, firsts)
    if rc2 not in (0, 1) or SANITIZER_RE.search(err_text2):
        fatal.append('pass 2: exit status %d or crash report' % rc2)
    if len(again) != len(firsts):
        fatal.append('pass 2: %d output lines for %d input lines' % (len(again), len(firsts)))
        again += [''] * (len(firsts) - len(again))

    fails = {'rejected': [], 'identity': [], 'invariance': [], 'idempotence': []}
    known = []
    passed = failed = n_variants = 0
    for i, ((smi, rid), (start, nv)) in enumerate(zip(mols, layout)):
        ok = True
        first = out[start]
        n_variants += nv
        if first == '':
            fails['rejected'].append('%s  %s\n      addsite: %s' %
                                     (rid, smi, errors.get(start + 1, 'empty output')))
            ok = False
        else:
            back = rd_canon(first)
            if back != smi:
                fails['identity'].append('%s  input %s\n      addsite %s\n      RDKit of addsite '
                                         '%s\n      RDKit of input   %s' %
                                         (rid, smi, first, back, smi))
                ok = False
            for k in range(1, nv + 1):
                v = out[start + k]
                if v != first:
                    why = errors.get(start + k + 1, '') if v == '' else ''
                    fails['invariance'].append('%s  variant %s\n      addsite %s %s\n      addsite '
                                               'of set SMILES %s\n      RDKit of variant %s' %
                                               (rid, lines[start + k], v, why, first,
                                                rd_canon(lines[start + k])))
                    ok = False
                    break
            if again[i] != first:
                fails['idempotence'].append('%s  canon %s\n      canon(canon) %s %s' %
                                            (rid, first, again[i], errors2.get(i + 1, '')))
                ok = False
        if ok:
            passed += 1
        elif rid in KNOWN:
            known.append('%s: %s' % (rid, KNOWN[rid]))
            for items in fails.values():
                if items and items[-1].startswith(rid + ' '):
                    items.pop()
        else:
            failed += 1

    print('check_rdkit_canon: %d molecules, %d variants fed (%d RDKit variants skipped as not '
          'round-tripping in RDKit itself), %d SMILES in pass 1' %
          (len(mols), n_variants, skipped, len(lines)))
    for msg in fatal:
        print('FATAL: ' + msg)
    for kind, items in fails.items():
        print('%-12s %d molecules failed' % (kind + ':', len(items)))
    for kind, items in fails.items():
        if items:
            print('\n--- first %d %s failures' % (min(SHOW, len(items)), kind))
            for it in items[:SHOW]:
                print('  ' + it)
    for k in known:
        print('known exception (not counted): ' + k)
    if fatal:
        failed = max(failed, 1)
    print('%d passed, %d failed' % (passed, failed))
    return 1 if failed else 0


if __name__ == '__main__':
    sys.exit(main())
