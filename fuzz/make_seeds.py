#!/usr/bin/env python3
"""make_seeds.py — writes the committed seed corpora under fuzz/corpus/<target>/ from the
project's own test data (tests/data, reactions/, examples/). Deterministic; rerun after the
test data changes and commit the result. Usage: python3 fuzz/make_seeds.py"""
import hashlib
import os
import shutil

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)


def rows(path):
    with open(os.path.join(ROOT, path), encoding="utf-8") as f:
        for line in f:
            line = line.rstrip("\n")
            if line and not line.startswith("#"):
                yield line.split("\t")


def write(target, items):
    out = os.path.join(HERE, "corpus", target)
    shutil.rmtree(out, ignore_errors=True)
    os.makedirs(out)
    seen = set()
    for data in items:
        if isinstance(data, str):
            data = data.encode("utf-8")
        h = hashlib.sha1(data).hexdigest()[:16]
        if h in seen:
            continue
        seen.add(h)
        with open(os.path.join(out, h), "wb") as f:
            f.write(data)
    print(f"{target}: {len(seen)} seeds")


def smiles_seeds():
    canon = [r[0] for r in rows("tests/data/canon_set.smi")]
    items = canon[::40]                       # about 80 real molecules, spread over the set
    items += [r[0] for r in rows("tests/data/malformed.tsv")][:60]
    cases = list(rows("tests/data/cases.tsv"))[1:]
    for r in cases[::3]:
        items.append(r[2])
        if len(r) > 5 and r[5]:
            items.append(f"{r[2]}>>{r[5]}")
    items += ["F/C=C/F", "C[C@H](N)C(=O)O", "c1ccccc1", "C1=CC=CC=C1", "[13CH3:1][OH:2]",
              "CC>O>CC |f:0|", "C=C.Br>>CC(Br)", "[NH4+].[Cl-]", "C%10CC%10", "O=[N+]([O-])C=C"]
    return items


def rule_seeds():
    items = []
    for d in ("reactions", "tests/data/rules"):
        for name in sorted(os.listdir(os.path.join(ROOT, d))):
            if name.endswith(".json"):
                with open(os.path.join(ROOT, d, name), "rb") as f:
                    items.append(f.read())
    return items


def reagent_seeds():
    items = [r[0] for r in rows("tests/data/rules/reagent_texts.tsv")]
    items += [r[1] for r in rows("examples/predict_demo.tsv") if len(r) > 1]
    items += ["B.C1CCOC1", "Br", "BrBr", "O=O", "[H][H]", "OO.[OH-].[Na+]"]
    return items


def predict_seeds():
    cases = list(rows("tests/data/cases.tsv"))[1:]
    items = []
    for i, r in enumerate(cases):
        items.append(bytes([i % 64, i % 16]) + r[2].encode())
    for i, r in enumerate(rows("examples/predict_demo.tsv")):
        items.append(bytes([(7 * i) % 64, 1]) + r[0].encode())
    return items


def record_seeds():
    items = []
    base = os.path.join(ROOT, "tests", "data", "io")
    if os.path.isdir(base):
        for name in sorted(os.listdir(base)):
            p = os.path.join(base, name)
            if os.path.isfile(p) and not name.endswith(".gz") and os.path.getsize(p) < 8192:
                with open(p, "rb") as f:
                    data = f.read()
                for fmt in range(5):
                    items.append(bytes([fmt]) + data)
    items.append(b"\x01C=CC\tHBr\tr1\nCC(C)=C\t1) BH3.THF 2) H2O2, NaOH\tr2\n")
    items.append(b"\x02id,reaction_smiles,reagents\nr1,C=CC>>CC(C)Br,HBr\n")
    items.append(b"\x03id\tsmiles\treagents\nr1\tC=CC\tHBr\n")
    items.append(b'\x04{"id": "r1", "smiles": "C=CC", "reagents": "HBr"}\n')
    return items


if __name__ == "__main__":
    write("smiles", smiles_seeds())
    write("rules", rule_seeds())
    write("reagents", reagent_seeds())
    write("predict", predict_seeds())
    write("records", record_seeds())
