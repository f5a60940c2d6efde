#!/usr/bin/env python3
"""check_rules_data.py — cross-checks the rule files in reactions/ with RDKit.

For every rule file:
  * every SMILES (product groups, reagent_smiles, agent sets, figure examples) is read by RDKit;
  * the groups a variant adds sum to its reagent_smiles formula (a group is bonded through its
    first atom, so an organic-subset first atom gives up one implicit H per bond; a bracket
    atom such as [H] keeps its written count);
  * each figure example has the substitution pattern its class names (substituents on the two
    C=C carbons, counted with RDKit), and styrene classes have an aryl on the C=C.
Run by ctest with AS_SOURCE_DIR set; exits 1 with one line per problem.
"""
import glob
import json
import os
import sys
from collections import Counter

from rdkit import Chem
from rdkit import RDLogger

RDLogger.DisableLog("rdApp.*")


def formula(smiles):
    m = Chem.MolFromSmiles(smiles)
    if m is None:
        return None
    m = Chem.AddHs(m)
    return Counter(a.GetSymbol() for a in m.GetAtoms())


def group_formula(smiles, bonds):
    f = formula(smiles)
    if f is None:
        return None
    first = Chem.MolFromSmiles(smiles).GetAtomWithIdx(0)
    if first.GetNoImplicit():   # bracket atom: the written H count stays
        return f
    f["H"] -= bonds
    return f


def alkene_class(smiles):
    """Substitution class of the single non-aromatic C=C in smiles."""
    m = Chem.MolFromSmiles(smiles)
    dbs = [b for b in m.GetBonds() if b.GetBondType() == Chem.BondType.DOUBLE
           and b.GetBeginAtom().GetSymbol() == "C" and b.GetEndAtom().GetSymbol() == "C"
           and not b.GetIsAromatic()]
    if len(dbs) != 1:
        return None
    b = dbs[0]
    a, c = b.GetBeginAtom(), b.GetEndAtom()
    na = [x for x in a.GetNeighbors() if x.GetIdx() != c.GetIdx()]
    nc = [x for x in c.GetNeighbors() if x.GetIdx() != a.GetIdx()]
    aryl = any(x.GetIsAromatic() for x in na + nc)
    counts = sorted([len(na), len(nc)])
    if counts == [0, 1]:
        return "styrene" if aryl else "monosubstituted"
    if counts == [0, 2]:
        return "1,1-disubstituted"
    if counts == [1, 1]:
        return "1,2-disubstituted"
    if counts == [1, 2]:
        return "trisubstituted"
    if counts == [2, 2]:
        return "tetrasubstituted"
    return None


def main():
    src = os.environ.get("AS_SOURCE_DIR")
    if not src:
        print("AS_SOURCE_DIR is not set (run through ctest)")
        return 2
    problems = []
    files = sorted(glob.glob(os.path.join(src, "reactions", "*.json")))
    if len(files) < 14:
        problems.append(f"only {len(files)} rule files found")
    checked = 0
    for path in files:
        name = os.path.basename(path)
        with open(path, encoding="utf-8") as fh:
            rule = json.load(fh)
        for vi, v in enumerate(rule["variants"]):
            where = f"{name}: $.variants[{vi}]"
            for key in ("first", "second", "bridge", "reagent_smiles"):
                if v.get(key) and Chem.MolFromSmiles(v[key]) is None:
                    problems.append(f"{where}.{key}: RDKit cannot read {v[key]!r}")
            for ai, a in enumerate(v.get("agents", [])):
                if Chem.MolFromSmiles(a) is None:
                    problems.append(f"{where}.agents[{ai}]: RDKit cannot read {a!r}")
            if v.get("reagent_smiles") and (v.get("first") or v.get("bridge")):
                if v.get("bridge"):
                    added = group_formula(v["bridge"], 2)
                else:
                    added = group_formula(v["first"], 1) + group_formula(v["second"], 1)
                added = +added   # drop zero counts
                want = +formula(v["reagent_smiles"])
                checked += 1
                if added != want:
                    problems.append(f"{where}: groups add {dict(added)} but reagent_smiles "
                                    f"{v['reagent_smiles']!r} is {dict(want)}")
        for fi, f in enumerate(rule.get("figures", [])):
            where = f"{name}: $.figures[{fi}]"
            if "example" not in f:
                continue
            got = alkene_class(f["example"])
            want = f["class"].split(":")[0]
            if want.startswith(("cis-", "trans-")):
                want = "1,2-disubstituted"
            if got != want:
                problems.append(f"{where}: example {f['example']} is {got}, class says {want}")
            checked += 1
    for p in problems:
        print(p)
    print(f"{len(files)} rule files, {checked} formula/class checks, {len(problems)} problems")
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
