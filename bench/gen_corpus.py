#!/usr/bin/env python3
"""Deterministic corpus of alkene addition reactions for the annotate benchmark.

Writes N reaction-SMILES lines `SUBSTRATE>>[PRODUCT]<TAB>reagents<TAB>id` to stdout. Substrates
have 10 to 40 heavy atoms: acyclic, cyclic, styrenes, alkenes carrying ethers, esters, ketones,
nitriles and halides, several C=C, E/Z and ring stereo; reagents are the four core classes
(HX, acid hydration, hydroboration-oxidation, oxymercuration) as chemists write them, plus
radical HBr. About a third of the records carry a recorded product (built by string template
for terminal alkenes) so that the check verdict is exercised. The scenario is invented for
the benchmark; nothing here is measured data.

usage: gen_corpus.py N [SEED]
"""
import random
import re
import sys

# Substituent fragments (SMILES written so they can follow an atom).
TAILS = [
    'CCCCCC', 'CCCCCCCC', 'CC(C)C', 'CC(C)(C)C', 'CCOC', 'CCOCC', 'CCC(=O)OC', 'CC(=O)OCC',
    'CCC(C)=O', 'CCCC#N', 'CCCl', 'CCCBr', 'C1CCCCC1', 'CC1CCCC1', 'c1ccccc1', 'c1ccc(OC)cc1',
    'c1ccc(Cl)cc1', 'c1ccc(F)cc1', 'c1ccc(C(F)(F)F)cc1', 'c1ccc(C)cc1', 'CCc1ccccc1',
    'CCOc1ccccc1', 'COC(=O)CC', 'CCN(C)C(=O)C', 'CC[C@H](C)O', 'C[C@@H](CC)OC',
    'CCCCOCC(C)C', 'CC(=O)c1ccccc1', 'CCCC(=O)N(C)C', 'COCCOC',
]
RING_ARYL = ['c1ccccc1', 'c1ccc(OC)cc1', 'c1ccc(Cl)cc1', 'c1ccc(C)cc1', 'c1ccc(F)cc1',
             'c1ccc([N+](=O)[O-])cc1', 'c1ccc(C(F)(F)F)cc1', 'c1cc(OC)c(OC)cc1']

REAGENTS = [
    'HBr', 'HCl', 'HBr, ROOR', 'HBr, hv', 'H2SO4, H2O', 'H2O, H3PO4, heat',
    '1) BH3·THF 2) H2O2, NaOH', 'BH3-SMe2; H2O2/NaOH', '9-BBN; H2O2, NaOH',
    'Sia2BH, THF; H2O2, NaOH', 'Hg(OAc)2, H2O; NaBH4', '1. Hg(OAc)2, H2O/THF; 2. NaBH4, NaOH',
]


ATOM = re.compile(r'\[[^\]]*\]|Cl|Br|[BCNOSPFI]|[cnos]')


def heavy(smi):
    return len(ATOM.findall(smi))


# Inner links (divalent) used to lengthen a tail while keeping it a chain.
LINKS = ['CC', 'CCC', 'CCOC', 'CC(C)', 'CCC(=O)O', 'CCN(C)C(=O)', 'CCc1ccc(cc1)', 'C1CCC(CC1)']


def tail(rng, want):
    """A substituent of about `want` heavy atoms ending in a terminal group."""
    t = rng.choice(TAILS)
    while heavy(t) < want:
        t = rng.choice(LINKS) + t
    return t


def substrate(rng):
    kind = rng.randrange(9)
    want = rng.randrange(8, 34)
    t = tail(rng, want)
    if kind == 0:
        return 'C=C' + t, 'terminal', t
    if kind == 1:
        return 'C=C(C)' + t, 'gem', t
    if kind == 2:
        return 'C/C=C/' + t, 'e', t
    if kind == 3:
        return 'C/C=C\\' + t, 'z', t
    if kind == 4:
        return 'CC(C)=C' + t, 'tri', t
    if kind == 5:
        aryl = rng.choice(RING_ARYL).replace('1', '9')
        if rng.random() < 0.5:
            aryl = aryl.replace('c9ccc', 'c9cc(' + tail(rng, want // 2) + ')c', 1)
        return 'C=C' + aryl, 'styrene', None
    if kind == 6:
        ring = rng.choice(['C1=CCC(CC1)', 'C1=CC(CC1)', 'CC1=CCC(CC1)', 'C=C1CCC(CC1)'])
        return ring + tail(rng, want - 6), 'ring', None
    if kind == 7:
        return 'C=CC(' + tail(rng, want // 2) + ')C=C', 'diene', None
    return 'C=CC' + rng.choice(LINKS) + 'C/C=C/C', 'two', None


def product(s, kind, tail, reagent):
    if kind != 'terminal' or tail is None:
        return ''
    if reagent.startswith('HBr') and ('ROOR' in reagent or 'hv' in reagent):
        return 'BrCC' + tail
    if reagent.startswith('HBr'):
        return 'CC(Br)' + tail
    if reagent.startswith('HCl'):
        return 'CC(Cl)' + tail
    if 'BH' in reagent or 'BBN' in reagent:
        return 'OCC' + tail
    return 'CC(O)' + tail


def main():
    n = int(sys.argv[1])
    rng = random.Random(int(sys.argv[2]) if len(sys.argv) > 2 else 20261201)
    out = sys.stdout
    for i in range(n):
        s, kind, tail = substrate(rng)
        r = rng.choice(REAGENTS)
        p = product(s, kind, tail, r) if rng.random() < 0.35 else ''
        out.write('%s>>%s\t%s\tB%07d\n' % (s, p, r, i + 1))


if __name__ == '__main__':
    main()
