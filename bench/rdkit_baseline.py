#!/usr/bin/env python3
"""A straightforward RDKit (Debian python3-rdkit) pipeline doing annotate's job, for the
speed comparison in bench/run_bench.py: read reaction lines from stdin, parse the substrate,
pick the reagent class from the text, find the first non-aromatic C=C, place the groups by a
substitution-count Markovnikov rule (anti-Markovnikov for radical HBr and boranes), write the
canonical product SMILES, compare with the recorded product, and write one JSON line per
record. It carries none of addsite's scoring, stereo or rearrangements: it is the floor a
Python pipeline costs, not a competitor.
"""
import json
import sys

from rdkit import Chem, RDLogger

RDLogger.DisableLog('rdApp.*')
ALKENE = Chem.MolFromSmarts('[C;!a]=[C;!a]')


def classify(text):
    t = text.lower()
    if 'hbr' in t and ('roor' in t or 'hv' in t or 'peroxide' in t):
        return 'Br', True
    if 'hbr' in t:
        return 'Br', False
    if 'hcl' in t:
        return 'Cl', False
    if 'bh' in t or 'bbn' in t:
        return 'O', True
    return 'O', False


def predict(mol, group, anti):
    hits = mol.GetSubstructMatches(ALKENE)
    if not hits:
        return None
    a, b = hits[0]
    ha, hb = mol.GetAtomWithIdx(a).GetTotalNumHs(), mol.GetAtomWithIdx(b).GetTotalNumHs()
    # Markovnikov: the group on the carbon with fewer H
    target = a if ha < hb else b
    if anti:
        target = b if target == a else a
    rw = Chem.RWMol(mol)
    rw.GetBondBetweenAtoms(a, b).SetBondType(Chem.BondType.SINGLE)
    x = rw.AddAtom(Chem.Atom(Chem.Atom(group).GetAtomicNum()))
    rw.AddBond(target, x, Chem.BondType.SINGLE)
    p = rw.GetMol()
    Chem.SanitizeMol(p)
    return Chem.MolToSmiles(p)


def main():
    out = sys.stdout
    for n, line in enumerate(sys.stdin, 1):
        cells = line.rstrip('\n').split('\t')
        rec = {'line': n}
        try:
            rxn = cells[0]
            sub, prod = rxn.split('>>')
            m = Chem.MolFromSmiles(sub)
            group, anti = classify(cells[1] if len(cells) > 1 else '')
            p = predict(m, group, anti)
            rec['products'] = [p]
            if prod:
                pm = Chem.MolFromSmiles(prod)
                rec['verdict'] = 'agrees' if pm and Chem.MolToSmiles(pm) == p else 'differs'
            rec['status'] = 'annotated'
        except Exception as e:  # noqa: BLE001 - one record's failure is data, not a crash
            rec['status'] = 'error'
            rec['error'] = str(e)
        out.write(json.dumps(rec) + '\n')
    return 0


if __name__ == '__main__':
    sys.exit(main())
