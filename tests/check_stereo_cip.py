#!/usr/bin/python3
"""Checks the stereochemical outcome of syn and anti additions with RDKit's CIP labeller.

For each stereo-defined substrate below, `addsite predict --format json` is run and every
product that should carry the new relative configuration is read by RDKit (Debian
python3-rdkit, the outside reference): the CIP descriptors of its stereocentres
(rdCIPLabeler, the new Hanson et al. 2018 rules) must have the published relationship —
"like" (R,R)/(S,S), "unlike" (R,S), or a given set — and the product must be achiral exactly
when the published outcome is meso. The `stereo` word of the JSON (racemic, meso, single,
diastereomers) is checked too. A racemate is written as one enantiomer, so for racemic
products either enantiomer's labels are accepted.

Ring products whose substituents can be cis or trans without a stereocentre (4-substituted
cyclohexyl) are checked against RDKit's stereo perception (Chem.FindPotentialStereo).

Bridged bicyclic substrates (norbornene) are checked in three dimensions instead: RDKit
embeds the product (ETKDG) and the new C-O / C-D / C-B bond must point to the same side of
the ring as the one-carbon (methano) bridge: the exo face.

Environment: ADDSITE (the built binary). Prints one line per failure and "N passed,
M failed"; exit status 1 when any check fails.
"""
import json
import os
import subprocess
import sys

from rdkit import Chem
from rdkit import RDLogger
from rdkit.Chem import AllChem
from rdkit.Chem import rdCIPLabeler

RDLogger.DisableLog("rdApp.*")

ADDSITE = os.environ.get("ADDSITE")

# (id, substrate, reagents, which products, stereo word, CIP pattern, source)
#   which products: "major" or "all" (every product listed, e.g. a regioisomer mixture)
#   CIP pattern: "like" (all new centres R, or all S; chiral), "unlike" (R and S present),
#                "meso" (R and S present and the molecule is achiral), "none" (no centre)
CIP_CASES = [
    ("S01", "C/C=C\\C", "Br2, CH2Cl2", "major", "racemic", "like",
     "cis-2-butene + Br2: racemic (2R,3R)/(2S,3S)-2,3-dibromobutane, anti addition; "
     "McMurry, Organic Chemistry, 8th ed., Ch. 8 (from memory)"),
    ("S02", "C/C=C/C", "Br2, CH2Cl2", "major", "meso", "meso",
     "trans-2-butene + Br2: meso-(2R,3S)-2,3-dibromobutane; McMurry, Organic Chemistry, "
     "8th ed., Ch. 8 (from memory)"),
    ("S03", "C1=CCCCC1", "Br2, CCl4", "major", "racemic", "like",
     "cyclohexene + Br2: (±)-trans-1,2-dibromocyclohexane (1R,2R)/(1S,2S); Org. Synth. "
     "Coll. Vol. 2, 171 (trans-1,2-dibromocyclohexane, from memory)"),
    ("S04", "C/C=C\\C", "OsO4 (cat.), NMO, acetone/H2O", "major", "meso", "meso",
     "cis-2-butene + OsO4: meso-2,3-butanediol, syn addition; McMurry, Organic Chemistry, "
     "8th ed., Ch. 8 (from memory)"),
    ("S05", "C/C=C/C", "OsO4 (cat.), NMO, acetone/H2O", "major", "racemic", "like",
     "trans-2-butene + OsO4: (±)-(2R,3R)/(2S,3S)-2,3-butanediol; McMurry, Organic "
     "Chemistry, 8th ed., Ch. 8 (from memory)"),
    ("S06", "C/C=C\\C", "mCPBA, CH2Cl2", "major", "meso", "meso",
     "cis-2-butene + peroxy acid: cis-2,3-dimethyloxirane (meso), geometry retained; "
     "McMurry, Organic Chemistry, 8th ed., Ch. 8 (from memory)"),
    ("S07", "C/C=C/C", "mCPBA, CH2Cl2", "major", "racemic", "like",
     "trans-2-butene + peroxy acid: (±)-trans-2,3-dimethyloxirane (2R,3R)/(2S,3S); "
     "McMurry, Organic Chemistry, 8th ed., Ch. 8 (from memory)"),
    ("S08", "CC1=C(C)CCCC1", "H2, PtO2, AcOH", "major", "meso", "meso",
     "1,2-dimethylcyclohexene + H2/PtO2 in AcOH: mainly cis-1,2-dimethylcyclohexane (meso, "
     "1R,2S), syn delivery from the surface; McMurry, Organic Chemistry, 8th ed., Ch. 8 "
     "(from memory)"),
    ("S09", "c1ccccc1/C=C/c1ccccc1", "Br2, CH2Cl2", "major", "meso", "meso",
     "(E)-stilbene + Br2: meso-1,2-dibromo-1,2-diphenylethane; common practice (teaching "
     "laboratory preparation, mp about 237 °C for meso; Fieser, Organic Experiments, "
     "from memory)"),
    ("S10", "c1ccccc1/C=C\\c1ccccc1", "Br2, CH2Cl2", "major", "racemic", "like",
     "(Z)-stilbene + Br2 (no light, polar solvent): (±)-1,2-dibromo-1,2-diphenylethane; "
     "common practice, from memory (in non-polar solvent some meso also forms)"),
    ("S11", "C/C=C/C", "Br2, H2O", "major", "racemic", "unlike",
     "trans-2-butene + Br2/H2O: erythro-3-bromo-2-butanol (2R*,3S*), anti; Winstein & "
     "Lucas, J. Am. Chem. Soc. 1939, 61, 1576 (from memory)"),
    ("S12", "C/C=C\\C", "Br2, H2O", "major", "racemic", "like",
     "cis-2-butene + Br2/H2O: threo-3-bromo-2-butanol (2R*,3R*), anti; Winstein & Lucas, "
     "J. Am. Chem. Soc. 1939, 61, 1576 (from memory)"),
    ("S13", "C/C=C/CC", "NBS, H2O/DMSO", "all", "racemic", "unlike",
     "(E)-2-pent-ene + NBS/H2O: both regioisomeric bromohydrins (ends alike), each from "
     "anti opening: (2R*,3S*) like the trans-2-butene case; anti addition, McMurry, "
     "Organic Chemistry, 8th ed., Ch. 8 (from memory)"),
    ("S14", "C/C=C\\CC", "NBS, H2O/DMSO", "all", "racemic", "like",
     "(Z)-2-pentene + NBS/H2O: both regioisomeric bromohydrins, each (2R*,3R*); anti "
     "addition, McMurry, Organic Chemistry, 8th ed., Ch. 8 (from memory)"),
    ("S15", "C1=CCCCC1", "OsO4 (cat.), NMO, acetone/H2O", "major", "meso", "meso",
     "cyclohexene + OsO4/NMO: cis-1,2-cyclohexanediol (meso); VanRheenen, Kelly & Cha, "
     "Tetrahedron Lett. 1976, 1973 (from memory)"),
    ("S16", "C1=CCCCC1", "mCPBA, CH2Cl2", "major", "meso", "meso",
     "cyclohexene + mCPBA: cyclohexene oxide (cis-fused, meso); common practice"),
]

# Enantiopure substrates: (id, substrate, reagents, stereo word, source). The substrate's
# centre must survive with its CIP label (the cases are chosen so that the addition does not
# change the priority order at that centre) and be the only assigned centre when the word is
# "diastereomers" (new centres left unassigned) or the only centre at all for "single".
RETAINED_CASES = [
    ("S20", "C=CC[C@@H](C)O", "1. BH3·THF; 2. H2O2, NaOH", "single",
     "no new stereocentre; the remote carbinol centre is untouched (common practice)"),
    ("S21", "C[C@@H]1CCCC=C1", "Br2, CH2Cl2", "diastereomers",
     "(R)-3-methylcyclohexene + Br2: anti addition, but the face relative to the methyl "
     "group is not controlled: two trans-dibromide diastereomers (common practice)"),
    ("S22", "C[C@@H]1CCCC=C1", "OsO4 (cat.), NMO, acetone/H2O", "diastereomers",
     "(R)-3-methylcyclohexene + OsO4: cis diol on either face relative to the methyl "
     "group: diastereomers (common practice)"),
]

# Norbornene-type substrates: (id, substrate, reagents, stereo word, source). Every atom the
# reagent adds to a former alkene carbon (O, B-derived O, D; the epoxide O) must lie on the
# exo face in an RDKit embedding of the major product.
NORBORNENE = "C1CC2CC1C=C2"
# bicyclo[2.2.1]heptane, any bonds: atoms 2 and 5 are the bridgeheads, 6 the one-carbon bridge
NORBORNANE = Chem.MolFromSmarts("[#6]1~[#6]~[#6]2~[#6]~[#6]~[#6]1~[#6]2")
EXO_CASES = [
    ("X01", NORBORNENE, "1. BH3·THF; 2. H2O2, NaOH", "racemic",
     "exo-norborneol (about 99.5% exo); Brown & Zweifel, J. Am. Chem. Soc. 1961, 83, 2544 "
     "(from memory)"),
    ("X02", NORBORNENE, "1. 9-BBN, THF; 2. H2O2, NaOH", "racemic",
     "exo-norborneol, as for BH3 (Brown & Zweifel 1961, from memory)"),
    ("X03", NORBORNENE, "mCPBA, CH2Cl2", "meso",
     "exo-2,3-epoxynorbornane; Carey & Sundberg, Advanced Organic Chemistry, Part A, 5th "
     "ed., Ch. 2 (from memory)"),
    ("X04", NORBORNENE, "OsO4 (cat.), NMO, acetone/H2O", "meso",
     "exo-cis-2,3-norbornanediol; common practice (from memory)"),
    ("X05", NORBORNENE, "1. Hg(OAc)2, H2O/THF; 2. NaBH4, NaOH", "racemic",
     "exo-norborneol by cis-exo oxymercuration; Traylor & Baker, J. Am. Chem. Soc. 1963, "
     "85, 2746 (from memory)"),
    ("X06", NORBORNENE, "D2, Pd/C, EtOAc", "meso",
     "exo,exo-2,3-dideuterionorbornane; common practice (from memory)"),
    ("X07", "C1=CC2CC1C=C2", "1. 9-BBN (1 equiv), THF; 2. H2O2, NaOH", "racemic",
     "norbornadiene, one C=C: exo alcohol, the other C=C kept; exo face as for norbornene "
     "(common practice, from memory)"),
    ("X09", "C[C@]12CC[C@H](C1)C=C2C", "OsO4 (cat.), NMO, acetone/H2O", "single",
     "enantiopure 1,2-dimethylnorbornene: exo-cis diol, the bridgehead configuration kept "
     "(exo face as for norbornene, common practice, from memory)"),
    ("X10", "C[C@@]12CC[C@@H](C1)C=C2C", "OsO4 (cat.), NMO, acetone/H2O", "single",
     "the enantiomer of X09: the exo diol must follow the written bridgeheads"),
    ("X08", "CC12CCC(C1)C=C2", "mCPBA, CH2Cl2", "racemic",
     "1-methylnorbornene: exo epoxide, the bridgehead methyl points away from both faces "
     "(common practice, from memory)"),
]


# Ring cis/trans without stereocentres: (id, substrate, reagents, product, stereo word,
# source). The product must be listed with that word, and RDKit's stereo perception
# (Chem.FindPotentialStereo, the outside reference) must find potential stereo in it exactly
# when the word is not "none".
RING_CASES = [
    ("R01", "CC1CCC=CC1", "HBr", "CC1CCC(Br)CC1", "diastereomers",
     "1-bromo-4-methylcyclohexane exists as cis and trans isomers; HBr addition through the "
     "cation does not control them (common practice)"),
    ("R02", "CC1(C)CCC=CC1", "HBr", "CC1(C)CCC(Br)CC1", "none",
     "1-bromo-4,4-dimethylcyclohexane has no stereoisomers (common practice)"),
    ("R03", "C1CCC=CC1", "HBr", "BrC1CCCCC1", "none",
     "bromocyclohexane has no stereoisomers (common practice)"),
    ("R04", "CC1CC=C1", "HBr", "CC1CC(Br)C1", "diastereomers",
     "1-bromo-3-methylcyclobutane exists as cis and trans isomers (common practice)"),
    ("R05", "C=CC1CCC=CC1", "HBr", "C=CC1CCC(Br)CC1", "diastereomers",
     "4-bromo-1-vinylcyclohexane: cis and trans (common practice)"),
]


def run(smi, reagents):
    p = subprocess.run([ADDSITE, "predict", smi, "--reagents", reagents, "--format", "json"],
                       capture_output=True, text=True, timeout=60)
    if p.returncode != 0:
        return None, p.stderr.strip()
    return json.loads(p.stdout), None


def cip_labels(mol):
    """CIP labels of the assigned tetrahedral centres, by atom index."""
    rdCIPLabeler.AssignCIPLabels(mol)
    out = {}
    for a in mol.GetAtoms():
        if a.HasProp("_CIPCode") and a.GetChiralTag() != Chem.ChiralType.CHI_UNSPECIFIED:
            out[a.GetIdx()] = a.GetProp("_CIPCode")
    return out


def is_achiral(mol):
    m2 = Chem.Mol(mol)
    for a in m2.GetAtoms():
        if a.GetChiralTag() in (Chem.ChiralType.CHI_TETRAHEDRAL_CW,
                                Chem.ChiralType.CHI_TETRAHEDRAL_CCW):
            a.InvertChirality()
    return Chem.MolToSmiles(m2) == Chem.MolToSmiles(mol)


def unassigned_centres(mol):
    found = Chem.FindMolChiralCenters(mol, includeUnassigned=True,
                                      useLegacyImplementation=False)
    return [i for i, lab in found if lab == "?"]


def check_pattern(smi, pattern):
    mol = Chem.MolFromSmiles(smi)
    if mol is None:
        return "RDKit cannot read %s" % smi
    if unassigned_centres(mol):
        return "%s has stereocentres without configuration" % smi
    labs = sorted(set(cip_labels(mol).values()))
    achiral = is_achiral(mol)
    if pattern == "like":
        if len(labs) != 1 or labs[0] not in ("R", "S") or achiral:
            return "%s: CIP %s%s, expected (R,R)/(S,S) and chiral" % (
                smi, cip_labels(mol), " (achiral)" if achiral else "")
    elif pattern in ("unlike", "meso"):
        if labs != ["R", "S"]:
            return "%s: CIP %s, expected R and S" % (smi, cip_labels(mol))
        if pattern == "meso" and not achiral:
            return "%s: chiral, expected meso" % smi
        if pattern == "unlike" and achiral:
            return "%s: achiral, expected a racemic (R*,S*) pair" % smi
    return None


def exo_problems(smi):
    """Embeds smi (RDKit ETKDG) and returns a list of problems: every non-carbon atom bonded
    to a two-carbon-bridge carbon of the bicyclo[2.2.1] skeleton must sit on the side of the
    one-carbon bridge."""
    mol = Chem.MolFromSmiles(smi)
    if mol is None:
        return ["RDKit cannot read %s" % smi]
    if unassigned_centres(mol):
        return ["%s has stereocentres without configuration" % smi]
    match = mol.GetSubstructMatch(NORBORNANE)
    if not match:
        return ["%s: no bicyclo[2.2.1] skeleton found" % smi]
    heads = [match[2], match[5]]
    bridge = match[6]
    skeleton = set(match)
    molh = Chem.AddHs(mol)
    if AllChem.EmbedMolecule(molh, randomSeed=0xA5D) != 0:
        return ["%s: RDKit could not embed it" % smi]
    pos = molh.GetConformer().GetPositions()
    added = []  # (bridge carbon, atom the reagent put on it)
    for pair in ((match[0], match[1]), (match[3], match[4])):
        for c in pair:
            for x in mol.GetAtomWithIdx(c).GetNeighbors():
                if x.GetIdx() not in skeleton and (x.GetSymbol() != "C" or x.GetIsotope()):
                    added.append((c, x.GetIdx(), pair))
    if not added:
        return ["%s: no added atom on the ring found" % smi]
    problems = []
    for c, x, pair in added:
        # plane of the six-membered ring that holds c: both bridgeheads and the pair c is in
        pts = [pos[i] for i in heads + list(pair)]
        centre = sum(pts) / len(pts)
        normal = _plane_normal(pts, centre)
        side_bridge = float(normal @ (pos[bridge] - centre))
        side_x = float(normal @ (pos[x] - pos[c]))
        if side_bridge * side_x <= 0:
            problems.append("%s: atom %d on C%d is endo (3-D embedding)" % (smi, x + 1, c + 1))
    return problems


def _plane_normal(pts, centre):
    import numpy
    a = numpy.array([p - centre for p in pts])
    return numpy.linalg.svd(a)[2][2]


def main():
    if not ADDSITE or not os.path.exists(ADDSITE):
        print("ADDSITE is not set to the built binary", file=sys.stderr)
        return 2
    passed = failed = 0

    def report(cid, problems, what):
        nonlocal passed, failed
        if problems:
            failed += 1
            print("FAIL %s %s: %s" % (cid, what, "; ".join(problems)))
        else:
            passed += 1

    for cid, smi, reagents, which, word, pattern, _source in CIP_CASES:
        out, errtext = run(smi, reagents)
        if out is None:
            report(cid, ["addsite failed: %s" % errtext], smi)
            continue
        prods = out["products"]
        if which == "major":
            prods = [p for p in prods if p["role"] == "major"][:1]
        problems = []
        if not prods:
            problems.append("no product to check")
        for p in prods:
            if p["stereo"] != word:
                problems.append("%s: stereo %r, expected %r" % (p["smiles"], p["stereo"], word))
            why = check_pattern(p["smiles"], pattern)
            if why:
                problems.append(why)
        report(cid, problems, "%s + %s" % (smi, reagents))

    for cid, smi, reagents, word, _source in RETAINED_CASES:
        out, errtext = run(smi, reagents)
        if out is None:
            report(cid, ["addsite failed: %s" % errtext], smi)
            continue
        sub_labels = list(cip_labels(Chem.MolFromSmiles(smi)).values())
        problems = []
        majors = [p for p in out["products"] if p["role"] == "major"]
        if not majors:
            problems.append("no major product")
        for p in majors[:1]:
            if p["stereo"] != word:
                problems.append("%s: stereo %r, expected %r" % (p["smiles"], p["stereo"], word))
            mol = Chem.MolFromSmiles(p["smiles"])
            labs = list(cip_labels(mol).values())
            if labs != sub_labels:
                problems.append("%s: assigned centres %s, expected the substrate's %s only" % (
                    p["smiles"], labs, sub_labels))
            if word == "diastereomers" and not unassigned_centres(mol):
                problems.append("%s: new centres should be left unassigned" % p["smiles"])
            if word == "single" and unassigned_centres(mol):
                problems.append("%s: unexpected unassigned centre" % p["smiles"])
        report(cid, problems, "%s + %s" % (smi, reagents))

    for cid, smi, reagents, word, _source in EXO_CASES:
        out, errtext = run(smi, reagents)
        if out is None:
            report(cid, ["addsite failed: %s" % errtext], smi)
            continue
        majors = [p for p in out["products"] if p["role"] == "major"]
        problems = []
        if not majors:
            problems.append("no major product (%s)" % ", ".join(
                "%s %s" % (p["smiles"], p["role"]) for p in out["products"]))
        for p in majors[:1]:
            if p["stereo"] != word:
                problems.append("%s: stereo %r, expected %r" % (p["smiles"], p["stereo"], word))
            problems += exo_problems(p["smiles"])
        if not any("exo face" in r for r in out["rationale"]):
            problems.append("the rationale does not name the exo face")
        report(cid, problems, "%s + %s" % (smi, reagents))

    for cid, smi, reagents, want, word, _source in RING_CASES:
        out, errtext = run(smi, reagents)
        if out is None:
            report(cid, ["addsite failed: %s" % errtext], smi)
            continue
        key = Chem.MolToSmiles(Chem.MolFromSmiles(want))
        hits = [p for p in out["products"]
                if Chem.MolToSmiles(Chem.MolFromSmiles(p["smiles"])) == key]
        problems = []
        if not hits:
            problems.append("%s not among the products" % want)
        for p in hits[:1]:
            if p["stereo"] != word:
                problems.append("%s: stereo %r, expected %r" % (p["smiles"], p["stereo"], word))
            rd = len(Chem.FindPotentialStereo(Chem.MolFromSmiles(p["smiles"])))
            if (rd > 0) != (word != "none"):
                problems.append("%s: RDKit finds %d potential stereo elements" % (
                    p["smiles"], rd))
        report(cid, problems, "%s + %s" % (smi, reagents))

    print("%d passed, %d failed" % (passed, failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
