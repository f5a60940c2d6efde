#!/usr/bin/python3
"""make_canon_set.py — builds tests/data/canon_set.smi, the molecule set for check_rdkit_canon.py.

Reference toolkit: RDKit (Debian package python3-rdkit). Every molecule is written as RDKit's own
canonical isomeric SMILES, and only molecules that RDKit reads back to the identical string are kept.

Real molecules come from the Debian package rdkit-data (read from the installed package by this
generator only; the tests never read the package):
  Data/NCI/first_5K.smi                                   (NCI open database, first 5000 records)
  Data/Pains/test_data/wehi_mols.csv                      (WEHI screening compounds)
  Contrib/FreeWilson/data/CHEMBL2321810.smi               (ChEMBL series)
  Contrib/fraggle/data/ChEMBL_11265_actives.smi           (ChEMBL actives, with salts)
  Contrib/NIBRSubstructureFilters/examples/chembl24_structs_randomtestSample_100.csv
  Contrib/Fastcluster/testdata/cdk2.sdf, Contrib/PBF/testData/egfr.sdf,
  Projects/DbCLI/testData/bzr.sdf, Projects/DbCLI/testData/pubchem.200.sdf
The package directories are found through rdkit.RDConfig, so no machine path is written here.

Deterministic: all sampling uses random.Random(SEED); stereo enumeration is seeded per molecule.
Run:  /usr/bin/python3 tests/tools/make_canon_set.py > tests/data/canon_set.smi

Filters (what an OpenSMILES-subset reader must handle): no '*' or query atoms, no chirality other
than tetrahedral, bonds only single/double/triple/aromatic, aromatic symbols only b c n o p s se as,
at most 100 heavy atoms, one component or one main component plus small counter-ions (<= 12 heavy
atoms each).

Enrichment: for about half of the molecules with unspecified tetrahedral centres or C=C bonds,
one stereoisomer is assigned with RDKit's EnumerateStereoisomers (seeded); some real molecules get
an isotope label ([13C] or [2H]) and are listed with '+iso' in the id; '+stereo' marks an assigned
stereoisomer. A hand-picked section (ids 'hand:...') covers meso compounds, ring cis/trans,
polycycles, E/Z in rings >= 8 and in conjugated chains, heteroaromatics, charges and isotopes; the
names there were checked with RDKit CIP labels (see HAND_CIP below) or are common knowledge.
"""
import csv
import os
import random
import sys

from rdkit import Chem, RDConfig, RDLogger
from rdkit.Chem.EnumerateStereoisomers import EnumerateStereoisomers, StereoEnumerationOptions

RDLogger.DisableLog('rdApp.*')

SEED = 20240611
MAX_HEAVY = 100
MAX_COUNTERION_HEAVY = 12

# (tag, path relative to an RDConfig directory, reader, how many to take at most)
SOURCES = [
    ('nci5k', (RDConfig.RDDataDir, 'NCI/first_5K.smi'), 'smi', 1400),
    ('wehi', (RDConfig.RDDataDir, 'Pains/test_data/wehi_mols.csv'), 'wehi', 550),
    ('chembl2321810', (RDConfig.RDContribDir, 'FreeWilson/data/CHEMBL2321810.smi'), 'smi', 200),
    ('chembl11265', (RDConfig.RDContribDir, 'fraggle/data/ChEMBL_11265_actives.smi'), 'smi', 100),
    ('chembl24', (RDConfig.RDContribDir,
                  'NIBRSubstructureFilters/examples/chembl24_structs_randomtestSample_100.csv'),
     'chembl24', 100),
    ('cdk2', (RDConfig.RDContribDir, 'Fastcluster/testdata/cdk2.sdf'), 'sdf', 47),
    ('egfr', (RDConfig.RDContribDir, 'PBF/testData/egfr.sdf'), 'sdf', 200),
    ('bzr', (RDConfig.RDProjDir, 'DbCLI/testData/bzr.sdf'), 'sdf', 163),
    ('pubchem200', (RDConfig.RDProjDir, 'DbCLI/testData/pubchem.200.sdf'), 'sdf', 200),
]

# Hand-picked molecules: (id, SMILES as written by us). Stereo names were checked against RDKit's
# CIP labels where HAND_CIP gives them; ring cis/trans were checked by the relation below
# (cis-1,2 = R,S meso; trans-1,2 = R,R/S,S) and, for 1,4 and 1,3 rings, by common practice.
HAND = [
    # meso and ring cis/trans
    ('cis-1,2-dimethylcyclohexane_meso', 'C[C@@H]1CCCC[C@@H]1C'),
    ('trans-1,2-dimethylcyclohexane_RR', 'C[C@@H]1CCCC[C@H]1C'),
    ('cis-1,3-dimethylcyclohexane_meso', 'C[C@@H]1CCC[C@H](C)C1'),
    ('trans-1,3-dimethylcyclohexane', 'C[C@@H]1CCC[C@@H](C)C1'),
    ('cis-1,4-dimethylcyclohexane', 'C[C@H]1CC[C@@H](C)CC1'),
    ('trans-1,4-dimethylcyclohexane', 'C[C@H]1CC[C@H](C)CC1'),
    ('cis-1,2-dichlorocyclopropane_meso', 'Cl[C@@H]1C[C@@H]1Cl'),
    ('cis-cyclopentane-1,2-diol_meso', 'O[C@@H]1CCC[C@@H]1O'),
    ('cis-4-tert-butylcyclohexanol', 'CC(C)(C)[C@H]1CC[C@@H](O)CC1'),
    ('meso-2,3-dibromobutane', 'C[C@H](Br)[C@@H](C)Br'),
    ('2R3R-2,3-dibromobutane', 'C[C@@H](Br)[C@@H](C)Br'),
    ('meso-tartaric_acid', 'O=C(O)[C@H](O)[C@H](O)C(=O)O'),
    ('L-tartaric_acid_RR', 'O=C(O)[C@H](O)[C@@H](O)C(=O)O'),
    ('meso-butane-2,3-diol', 'C[C@@H](O)[C@H](C)O'),
    ('meso-hydrobenzoin', 'O[C@@H](c1ccccc1)[C@H](O)c1ccccc1'),
    ('meso-stilbene_dibromide', 'Br[C@@H](c1ccccc1)[C@H](Br)c1ccccc1'),
    ('meso-2,4-pentanediol', 'C[C@@H](O)C[C@H](C)O'),
    ('ribitol_meso', 'OC[C@@H](O)[C@@H](O)[C@@H](O)CO'),
    ('xylitol_meso', 'OC[C@@H](O)[C@H](O)[C@@H](O)CO'),
    ('galactaric_acid_meso', 'O=C(O)[C@@H](O)[C@H](O)[C@H](O)[C@@H](O)C(=O)O'),
    ('cis-decalin', 'C1CCC[C@H]2CCCC[C@@H]12'),
    ('trans-decalin', 'C1CCC[C@H]2CCCC[C@H]12'),
    # polycycles and symmetric skeletons (canonical ranking stress)
    ('cubane', 'C12C3C4C1C5C2C3C45'),
    ('adamantane', 'C1C2CC3CC1CC(C2)C3'),
    ('prismane', 'C12C3C1C4C2C34'),
    ('tetrahedrane', 'C12C3C1C23'),
    ('bicyclo[2.2.2]octane', 'C1CC2CCC1CC2'),
    ('norbornane', 'C1CC2CCC1C2'),
    ('spiro[4.4]nonane', 'C1CCC2(C1)CCCC2'),
    ('bicyclo[1.1.0]butane', 'C1C2C1C2'),
    ('twistane', 'C1CC2CC3CC1C2CC3'),
    ('dodecahedrane', 'C12C3C4C5C1C1C6C2C2C3C3C4C4C5C1C1C6C2C3C41'),
    ('triptycene', 'c1ccc2c(c1)C1c3ccccc3C2c2ccccc21'),
    ('[2.2]paracyclophane', 'C1Cc2ccc(cc2)CCc2ccc1cc2'),
    ('18-crown-6', 'C1COCCOCCOCCOCCOCCO1'),
    ('cyclohexane', 'C1CCCCC1'),
    ('cyclopropane', 'C1CC1'),
    ('C60_fullerene', 'c12c3c4c5c1c1c6c7c2c2c8c3c3c9c4c4c%10c5c5c1c1c6c6c%11c7c2c2c7c8c3c3c8'
                      'c9c4c4c9c%10c5c5c1c1c6c6c%11c2c2c7c3c3c8c4c4c9c5c1c1c6c2c3c41'),
    # aromatic rings and heterocycles
    ('benzene', 'c1ccccc1'),
    ('biphenyl', 'c1ccccc1-c1ccccc1'),
    ('hexamethylbenzene', 'Cc1c(C)c(C)c(C)c(C)c1C'),
    ('naphthalene', 'c1ccc2ccccc2c1'),
    ('anthracene', 'c1ccc2cc3ccccc3cc2c1'),
    ('phenanthrene', 'c1ccc2c(c1)ccc1ccccc12'),
    ('pyrene', 'c1cc2ccc3cccc4ccc(c1)c2c34'),
    ('coronene', 'c1cc2ccc3ccc4ccc5ccc6ccc1c1c2c3c4c5c61'),
    ('azulene', 'c1ccc2cccc2cc1'),
    ('pyridine', 'c1ccncc1'),
    ('pyrrole', 'c1cc[nH]c1'),
    ('furan', 'c1ccoc1'),
    ('thiophene', 'c1ccsc1'),
    ('indole', 'c1ccc2[nH]ccc2c1'),
    ('imidazole', 'c1c[nH]cn1'),
    ('1-methylimidazole', 'Cn1ccnc1'),
    ('pyrazole', 'c1cn[nH]c1'),
    ('1,2,4-triazole', 'c1nc[nH]n1'),
    ('tetrazole', 'c1nnn[nH]1'),
    ('oxazole', 'c1cocn1'),
    ('thiazole', 'c1cscn1'),
    ('pyrimidine', 'c1cncnc1'),
    ('pyrazine', 'c1cnccn1'),
    ('quinoline', 'c1ccc2ncccc2c1'),
    ('isoquinoline', 'c1ccc2cnccc2c1'),
    ('purine', 'c1ncc2[nH]cnc2n1'),
    ('adenine', 'Nc1ncnc2[nH]cnc12'),
    ('caffeine', 'Cn1c(=O)c2c(ncn2C)n(C)c1=O'),
    ('2-pyridone', 'O=c1cccc[nH]1'),
    ('benzofuran', 'c1ccc2occc2c1'),
    ('benzothiophene', 'c1ccc2sccc2c1'),
    ('carbazole', 'c1ccc2c(c1)[nH]c1ccccc12'),
    ('selenophene', 'c1cc[se]c1'),
    ('phosphinine', 'c1ccpcc1'),
    ('tropylium', '[cH+]1cccccc1'),
    ('cyclopentadienide', '[cH-]1cccc1'),
    ('pyridine_N-oxide', '[O-][n+]1ccccc1'),
    ('N-methylpyridinium', 'C[n+]1ccccc1'),
    # conjugated ring systems where the aromatic/Kekule choice and a non-unique smallest ring
    # set can make the output depend on input order (canonical-form stress)
    ('quadrannulene', 'C1=CC2=CC=C3C=CC4=CC=C1C1=C2C3=C41'),
    ('porphine', 'c1cc2cc3ccc(cc4ccc(cc5ccc(cc1n2)[nH]5)n4)[nH]3'),
    ('phthalocyanine', 'c1ccc2c(c1)c1nc2nc2[nH]c(nc3nc(nc4[nH]c(n1)c1ccccc41)c1ccccc31)c1ccccc21'),
    ('corannulene', 'c1cc2ccc3ccc4ccc5ccc1c1c2c3c4c51'),
    ('pentahelicene', 'c1ccc2c(c1)ccc1ccc3ccc4ccccc4c3c12'),
    ('triphenylene', 'c1ccc2c(c1)c1ccccc1c1ccccc21'),
    ('biphenylene', 'c1ccc2c(c1)-c1ccccc1-2'),
    ('fluoranthene', 'c1ccc2c(c1)-c1cccc3cccc-2c13'),
    ('acenaphthylene', 'C1=Cc2cccc3cccc1c23'),
    ('pyracylene', 'C1=CC2=C3C1=CC=C3C=C2'),
    ('pentalene', 'C1=CC2=CC=CC2=C1'),
    ('s-indacene', 'C1=CC=C2C=C3C=CC=C3C=C12'),
    ('heptalene', 'C1=CC=CC2=CC=CC=CC=C12'),
    ('cyclooctatetraene', 'C1=CC=CC=CC=C1'),
    ('[10]annulene', 'C1=CC=CC=CC=CC=C1'),
    ('[18]annulene', 'C1=CC=CC=CC=CC=CC=CC=CC=C1'),
    ('fulvene', 'C=C1C=CC=C1'),
    ('p-benzoquinone', 'O=C1C=CC(=O)C=C1'),
    ('anthraquinone', 'O=C1c2ccccc2C(=O)c2ccccc21'),
    ('paracyclophanediene', 'C1=CC2=CC=C1C=CC1=CC=C(C=C2)C=C1'),
    ('indolo[2,3-a]carbazole', 'c1ccc2c(c1)[nH]c1ccc3c4ccccc4[nH]c3c12'),
    # found by a wider run over all of rdkit-data (molecules named by their record there) and
    # their simplest relatives: bridgehead N stereo, fused rings whose aromaticity depends on the
    # Kekule form, hypervalent P in a ring
    ('Troger_base', 'Cc1ccc2c(c1)CN1CN2Cc2cc(C)ccc21'),  # RDKit 2022.09 drops its N stereo
    ('wehi-WEHI-0059803_stereo', 'CCCC12C[N@@]3CC(C)(C[N@](C1)C3(C)C)C2=O'),
    ('wehi-WEHI-0009545_stereo', 'CCNC(=S)N/N=C1/C2C[N@@]3CC[N@@](C2)CC1(c1ccccc1)C3'),
    ('pyrrolo[3,4-b]pyrazine-5,7-dione', 'O=C1NC(=O)c2nccnc21'),
    ('wehi-WEHI-0041341', 'O=C1c2nccnc2C(=O)N1c1ccc2c(c1)OCO2'),
    ('wehi-WEHI-0091072', 'O=C(O)c1cccc2c1Oc1nc3ccccc3nc1O2'),
    ('wehi-WEHI-0064137', 'O=c1nc2n3ccc(-c4ccncc4)cc3ncc-2s1'),
    ('nci5k-2667_hexachlorocyclotriphosphazene', 'ClP1(Cl)=NP(Cl)(Cl)=NP(Cl)(Cl)=N1'),
    # charges, salts and isotopes
    ('nitrobenzene', 'O=[N+]([O-])c1ccccc1'),
    ('nitromethane', 'C[N+](=O)[O-]'),
    ('ammonium_chloride', '[NH4+].[Cl-]'),
    ('sodium_acetate', 'CC(=O)[O-].[Na+]'),
    ('tetramethylammonium_bromide', 'C[N+](C)(C)C.[Br-]'),
    ('glycine_zwitterion', '[NH3+]CC(=O)[O-]'),
    ('L-alanine_zwitterion', 'C[C@H]([NH3+])C(=O)[O-]'),
    ('trimethylamine_N-oxide', 'C[N+](C)(C)[O-]'),
    ('diazomethane', 'C=[N+]=[N-]'),
    ('methyl_azide', 'CN=[N+]=[N-]'),
    ('carbon_monoxide', '[C-]#[O+]'),
    ('copper(II)_sulfate', '[Cu+2].[O-]S(=O)(=O)[O-]'),
    ('iron(III)_chloride', '[Fe+3].[Cl-].[Cl-].[Cl-]'),
    ('potassium_tert-butoxide', 'CC(C)(C)[O-].[K+]'),
    ('oxide_dianion_calcium', '[O-2].[Ca+2]'),
    ('perchlorate_sodium', '[O-][Cl+3]([O-])([O-])[O-].[Na+]'),
    ('dmso', 'CS(C)=O'),
    ('phosphoric_acid', 'OP(=O)(O)O'),
    ('methane-13C', '[13CH4]'),
    ('deuteriomethane', '[2H]C'),
    ('chloroform-d', '[2H]C(Cl)(Cl)Cl'),
    ('heavy_water', '[2H]O[2H]'),
    ('water-18O', '[18OH2]'),
    ('acetic_acid-1-13C', 'C[13C](=O)O'),
    ('S-ethanol-1-d', '[2H][C@@H](C)O'),
    ('benzene-d1', '[2H]c1ccccc1'),
    ('toluene-alpha-13C', '[13CH3]c1ccccc1'),
    ('oxygen_atom', '[O]'),
    ('hydrogen', '[H][H]'),
    ('water', 'O'),
    ('methane', 'C'),
    ('ammonia', 'N'),
    ('borane', 'B'),
    ('hydrogen_bromide', 'Br'),
    ('hydrogen_chloride', 'Cl'),
    ('scandium', '[Sc]'),
    ('ethyne', 'C#C'),
    ('hydrogen_cyanide', 'C#N'),
    ('carbon_dioxide', 'O=C=O'),
    # alkenes: E/Z, allylic and vinylic stereo, rings >= 8, conjugated chains
    ('ethene', 'C=C'),
    ('propene', 'C=CC'),
    ('isobutene', 'C=C(C)C'),
    ('E-but-2-ene', 'C/C=C/C'),
    ('Z-but-2-ene', 'C/C=C\\C'),
    ('E-1,2-difluoroethene', 'F/C=C/F'),
    ('Z-1,2-difluoroethene', 'F/C=C\\F'),
    ('E-1-bromopropene', 'C/C=C/Br'),
    ('Z-2-bromobut-2-ene', 'C/C=C(/C)Br'),
    ('E-stilbene', 'c1ccc(/C=C/c2ccccc2)cc1'),
    ('Z-stilbene', 'c1ccc(/C=C\\c2ccccc2)cc1'),
    ('E-hex-2-ene', 'CCC/C=C/C'),
    ('Z-hex-3-ene', 'CC/C=C\\CC'),
    ('fumaric_acid', 'OC(=O)/C=C/C(=O)O'),
    ('maleic_acid', 'OC(=O)/C=C\\C(=O)O'),
    ('E-cinnamic_acid', 'OC(=O)/C=C/c1ccccc1'),
    ('Z-cinnamic_acid', 'OC(=O)/C=C\\c1ccccc1'),
    ('E-tamoxifen', 'CC/C(=C(\\c1ccccc1)c1ccc(OCCN(C)C)cc1)c1ccccc1'),
    ('S-but-3-en-2-ol', 'C=C[C@H](C)O'),
    ('R-but-3-en-2-ol', 'C=C[C@@H](C)O'),
    ('R-E-pent-3-en-2-ol', 'C/C=C/[C@@H](C)O'),
    ('S-Z-pent-3-en-2-ol', 'C/C=C\\[C@H](C)O'),
    ('S-3-bromocyclohexene', 'Br[C@H]1CCCC=C1'),
    ('R-limonene', 'CC1=CC[C@@H](CC1)C(C)=C'),
    ('1R-alpha-pinene', 'CC1=CC[C@@H]2C[C@H]1C2(C)C'),
    ('R-carvone', 'CC1=CC[C@H](CC1=O)C(C)=C'),
    ('geranial_E', 'CC(C)=CCC/C(C)=C/C=O'),
    ('neral_Z', 'CC(C)=CCC/C(C)=C\\C=O'),
    ('sorbic_acid_2E4E', 'C/C=C/C=C/C(=O)O'),
    ('2E4Z-hexa-2,4-diene', 'C/C=C/C=C\\C'),
    ('all-E-hexatriene', 'C=C/C=C/C=C'),
    ('Z-hexatriene', 'C=C/C=C\\C=C'),
    ('all-trans-retinol', 'CC1=C(C(C)(C)CCC1)/C=C/C(C)=C/C=C/C(C)=C/CO'),
    ('methyl_oleate_Z', 'CCCCCCCC/C=C\\CCCCCCCC(=O)OC'),
    ('elaidic_acid_E', 'CCCCCCCC/C=C/CCCCCCCC(=O)O'),
    ('Z-cyclooctene', 'C1CCC/C=C\\CC1'),
    ('E-cyclooctene', 'C1CCC/C=C/CC1'),
    ('E-cyclodecene', 'C1CCCC/C=C/CCC1'),
    ('1Z5Z-cycloocta-1,5-diene', 'C1C/C=C\\CC/C=C\\1'),
    ('1E5E9E-cyclododecatriene', 'C1C/C=C/CC/C=C/CC/C=C/1'),
    ('1E5E9Z-cyclododecatriene', 'C1C/C=C/CC/C=C/CC/C=C\\1'),
    ('E-cyclononene', 'C1CCC/C=C/CCC1'),
    ('cyclohexene', 'C1CC=CCC1'),
    ('1-methylcyclohexene', 'CC1=CCCCC1'),
    ('styrene', 'C=Cc1ccccc1'),
    ('E-anethole', 'C/C=C/c1ccc(OC)cc1'),
    ('methyl_E-crotonate', 'C/C=C/C(=O)OC'),
    ('E-oxime_acetaldehyde', 'C/C=N/O'),
    ('Z-azobenzene', 'c1ccc(/N=N\\c2ccccc2)cc1'),
    # natural products and drugs with many centres
    ('menthol_1R2S5R', 'CC(C)[C@@H]1CC[C@@H](C)C[C@H]1O'),
    ('camphor_1R', 'CC1(C)[C@@H]2CC[C@@]1(C)C(=O)C2'),
    ('cholesterol', 'CC(C)CCC[C@@H](C)[C@H]1CC[C@H]2[C@@H]3CC=C4C[C@@H](O)CC[C@]4(C)[C@H]3CC'
                    '[C@]12C'),
    ('S-ibuprofen', 'CC(C)Cc1ccc([C@H](C)C(=O)O)cc1'),
    ('L-alanine', 'C[C@H](N)C(=O)O'),
    ('L-cysteine', 'N[C@@H](CS)C(=O)O'),
    ('L-threonine_2S3R', 'C[C@@H](O)[C@H](N)C(=O)O'),
    ('beta-D-glucopyranose', 'OC[C@H]1O[C@@H](O)[C@H](O)[C@@H](O)[C@@H]1O'),
    ('sucrose', 'OC[C@H]1O[C@H](O[C@]2(CO)O[C@H](CO)[C@@H](O)[C@@H]2O)[C@H](O)[C@@H](O)[C@@H]1O'),
    ('L-ascorbic_acid', 'OC[C@H](O)[C@H]1OC(=O)C(O)=C1O'),
    ('R-glyceraldehyde', 'O=C[C@H](O)CO'),
    ('1R2S-ephedrine', 'CN[C@@H](C)[C@H](O)c1ccccc1'),
    ('chiral_first_atom_H', '[C@H](F)(Cl)Br'),
    ('trans-9-methyldecalin', 'C[C@]12CCCC[C@@H]1CCCC2'),
]

# CIP labels we expect RDKit's new CIP labeller to give (a check on the hand names; labels from
# memory, not from a reference work). Names with 'meso' must also equal their mirror image.
# Ring cis/trans (1,2-, 1,3-, 1,4-dimethylcyclohexane, decalins, 4-tert-butylcyclohexanol) were
# checked once by a throwaway RDKit 3D embedding (same side of the mean ring plane = cis).
HAND_CIP = {
    'cis-1,2-dimethylcyclohexane_meso': ['R', 'S'],
    'trans-1,2-dimethylcyclohexane_RR': ['R', 'R'],
    'meso-2,3-dibromobutane': ['R', 'S'],
    '2R3R-2,3-dibromobutane': ['R', 'R'],
    'meso-tartaric_acid': ['R', 'S'],
    'L-tartaric_acid_RR': ['R', 'R'],
    'meso-butane-2,3-diol': ['R', 'S'],
    'meso-hydrobenzoin': ['R', 'S'],
    'S-but-3-en-2-ol': ['S'],
    'R-but-3-en-2-ol': ['R'],
    'R-E-pent-3-en-2-ol': ['R'],
    'S-Z-pent-3-en-2-ol': ['S'],
    'S-3-bromocyclohexene': ['S'],
    'R-limonene': ['R'],
    'R-carvone': ['R'],
    'S-ibuprofen': ['S'],
    'L-alanine': ['S'],
    'L-cysteine': ['R'],
    'L-threonine_2S3R': ['R', 'S'],
    'R-glyceraldehyde': ['R'],
    'menthol_1R2S5R': ['R', 'R', 'S'],
    'S-ethanol-1-d': ['S'],
    'cis-1,2-dichlorocyclopropane_meso': ['R', 'S'],
    'cis-cyclopentane-1,2-diol_meso': ['R', 'S'],
    'ribitol_meso': ['R', 'S', 's'],
    'xylitol_meso': ['R', 'S', 'r'],
    'galactaric_acid_meso': ['R', 'R', 'S', 'S'],
    'cis-1,3-dimethylcyclohexane_meso': ['R', 'S'],
}

ALLOWED_AROMATIC = {'B', 'C', 'N', 'O', 'P', 'S', 'Se', 'As'}
OK_BONDS = {Chem.BondType.SINGLE, Chem.BondType.DOUBLE, Chem.BondType.TRIPLE,
            Chem.BondType.AROMATIC}
OK_CHIRAL = {Chem.ChiralType.CHI_UNSPECIFIED, Chem.ChiralType.CHI_TETRAHEDRAL_CW,
             Chem.ChiralType.CHI_TETRAHEDRAL_CCW}


def canon(mol):
    return Chem.MolToSmiles(mol)


def mirror(smi):
    """Mirror image of a SMILES with tetrahedral marks only."""
    return smi.replace('@@', '!').replace('@', '@@').replace('!', '@')


def stable(smi):
    """RDKit reads its own canonical SMILES back to the same string."""
    m = Chem.MolFromSmiles(smi)
    return m is not None and canon(m) == smi


def acceptable(mol):
    if mol is None or mol.GetNumAtoms() == 0:
        return False
    heavy = sum(1 for a in mol.GetAtoms() if a.GetAtomicNum() > 1)
    if heavy > MAX_HEAVY:
        return False
    for a in mol.GetAtoms():
        if a.GetAtomicNum() == 0:
            return False
        if a.GetChiralTag() not in OK_CHIRAL:
            return False
        if a.GetIsAromatic() and a.GetSymbol() not in ALLOWED_AROMATIC:
            return False
        if a.GetNumRadicalElectrons() and a.GetAtomicNum() in (6, 7, 8):
            return False  # radicals in real sets are usually drawing errors
    for b in mol.GetBonds():
        if b.GetBondType() not in OK_BONDS:
            return False
    frags = Chem.GetMolFrags(mol, asMols=False)
    if len(frags) > 1:
        sizes = sorted((sum(1 for i in f if mol.GetAtomWithIdx(i).GetAtomicNum() > 1)
                        for f in frags), reverse=True)
        if any(s > MAX_COUNTERION_HEAVY for s in sizes[1:]):
            return False
    return True


def read_source(reader, path):
    """Yields (record id, RDKit mol or None)."""
    if reader == 'smi':
        with open(path) as fh:
            for n, line in enumerate(fh, 1):
                parts = line.split()
                if not parts or parts[0].lower() == 'smiles':
                    continue
                rid = parts[1] if len(parts) > 1 else str(n)
                yield rid, Chem.MolFromSmiles(parts[0])
    elif reader == 'wehi':
        with open(path, newline='') as fh:
            for row in csv.reader(fh):
                if len(row) >= 2:
                    yield row[1], Chem.MolFromSmiles(row[0])
    elif reader == 'chembl24':
        with open(path, newline='') as fh:
            for row in csv.DictReader(fh):
                yield row['chemblid'], Chem.MolFromSmiles(row['smiles'])
    elif reader == 'sdf':
        suppl = Chem.SDMolSupplier(path)
        for n, mol in enumerate(suppl, 1):
            rid = str(n)
            if mol is not None and mol.HasProp('_Name') and mol.GetProp('_Name').strip():
                rid = str(n) + '_' + mol.GetProp('_Name').strip().split()[0]
            yield rid, mol


def has_unassigned_stereo(mol):
    si = Chem.FindPotentialStereo(mol)
    return any(e.specified == Chem.StereoSpecified.Unspecified for e in si)


def assign_stereo(mol, seed):
    opts = StereoEnumerationOptions(onlyUnassigned=True, maxIsomers=1, rand=seed, unique=True)
    for iso in EnumerateStereoisomers(mol, options=opts):
        return iso
    return None


def label_isotope(mol, rng):
    """Puts [13C] on a random carbon or [2H] on a random C-H; returns a new mol or None."""
    rw = Chem.RWMol(mol)
    carbons = [a.GetIdx() for a in rw.GetAtoms() if a.GetAtomicNum() == 6]
    if not carbons:
        return None
    idx = rng.choice(carbons)
    atom = rw.GetAtomWithIdx(idx)
    if rng.random() < 0.5 or atom.GetTotalNumHs() == 0:
        atom.SetIsotope(13)
    else:
        h = rw.AddAtom(Chem.Atom(1))
        rw.GetAtomWithIdx(h).SetIsotope(2)
        rw.AddBond(idx, h, Chem.BondType.SINGLE)
        if atom.GetNumExplicitHs():
            atom.SetNumExplicitHs(atom.GetNumExplicitHs() - 1)
    try:
        m = rw.GetMol()
        Chem.SanitizeMol(m)
        return Chem.MolFromSmiles(canon(m))
    except Exception:
        return None


def features(mol):
    """Counts of the things the set should be rich in (for the header)."""
    f = {}
    ri = mol.GetRingInfo()
    centres = [a for a in mol.GetAtoms() if a.GetChiralTag() in
               (Chem.ChiralType.CHI_TETRAHEDRAL_CW, Chem.ChiralType.CHI_TETRAHEDRAL_CCW)]
    f['tetrahedral centre'] = bool(centres)
    f['implicit-H centre'] = any(a.GetTotalNumHs() == 1 for a in centres)
    f['ring-atom centre'] = any(a.IsInRing() for a in centres)
    ez = [b for b in mol.GetBonds() if b.GetStereo() in
          (Chem.BondStereo.STEREOE, Chem.BondStereo.STEREOZ,
           Chem.BondStereo.STEREOCIS, Chem.BondStereo.STEREOTRANS)]
    f['E/Z bond'] = bool(ez)
    f['E/Z in ring >= 8'] = any(b.IsInRing() and not any(
        ri.IsBondInRingOfSize(b.GetIdx(), k) for k in range(3, 8)) for b in ez)
    f['E/Z conjugated'] = any(nb2.GetBondType() in (Chem.BondType.DOUBLE, Chem.BondType.AROMATIC)
                              for b in ez
                              for at in (b.GetBeginAtom(), b.GetEndAtom())
                              for nb in at.GetBonds() if nb.GetIdx() != b.GetIdx()
                              for nb2 in nb.GetOtherAtom(at).GetBonds()
                              if nb2.GetIdx() != nb.GetIdx())
    for name, sma in PATTERNS:
        f[name] = mol.HasSubstructMatch(sma)
    f['isotope'] = any(a.GetIsotope() for a in mol.GetAtoms())
    f['charged atom'] = any(a.GetFormalCharge() for a in mol.GetAtoms())
    f['several components'] = len(Chem.GetMolFrags(mol)) > 1
    return f


PATTERNS = [(n, Chem.MolFromSmarts(s)) for n, s in [
    ('pyridine', 'n1ccccc1'), ('pyrrole [nH]', '[nH]1cccc1'), ('furan', 'o1cccc1'),
    ('thiophene', 's1cccc1'), ('indole', 'c1ccc2[nX3]ccc2c1'), ('imidazole', 'c1ncc[nX3]1'),
    ('fused aromatic', '[a;R2]'), ('azulene', 'c1ccc2cccc2cc1'),
    ('nitro', '[N+](=O)[O-]'), ('ammonium', '[NX4+]'), ('carboxylate', 'C(=O)[O-]'),
]]


def main():
    rng = random.Random(SEED)
    seen = set()
    records = []   # (smiles, id)

    def add(smi, rid):
        if smi in seen or not stable(smi):
            return False
        seen.add(smi)
        records.append((smi, rid))
        return True

    out = sys.stdout
    # ---- hand-picked section
    hand = []
    for name, smi in HAND:
        m = Chem.MolFromSmiles(smi)
        if m is None:
            sys.exit('hand case does not parse: %s %s' % (name, smi))
        if name in HAND_CIP:
            got = sorted(lab for _, lab in Chem.FindMolChiralCenters(m, includeCIP=True,
                                                                      useLegacyImplementation=False))
            if got != sorted(HAND_CIP[name]):
                sys.exit('hand case %s: CIP %s, expected %s' % (name, got, HAND_CIP[name]))
        if 'meso' in name and canon(Chem.MolFromSmiles(mirror(smi))) != canon(m):
            sys.exit('hand case %s is not achiral' % name)
        c = canon(m)
        if c in seen:
            continue
        if not stable(c):
            sys.exit('hand case not stable in RDKit: %s' % name)
        seen.add(c)
        hand.append((c, 'hand:' + name))

    # ---- real molecules
    for tag, (base, rel), reader, limit in SOURCES:
        pool = []
        for rid, mol in read_source(reader, os.path.join(base, rel)):
            if not acceptable(mol):
                continue
            pool.append((rid, mol))
        rng.shuffle(pool)
        # Prefer molecules with stereo elements (specified or not): up to 60 % of the quota.
        with_stereo = [p for p in pool if Chem.FindPotentialStereo(p[1])]
        plain = [p for p in pool if not Chem.FindPotentialStereo(p[1])]
        n_st = min(len(with_stereo), int(0.6 * limit))
        pool = with_stereo[:n_st] + plain + with_stereo[n_st:]
        taken = 0
        for rid, mol in pool:
            if taken >= limit:
                break
            rid = '%s:%s' % (tag, rid.replace('\t', '_').replace(' ', '_'))
            if has_unassigned_stereo(mol) and rng.random() < 0.85:
                iso = assign_stereo(mol, rng.randrange(1 << 30))
                if iso is not None:
                    mol, rid = Chem.MolFromSmiles(canon(iso)), rid + '+stereo'
                    if mol is None:
                        continue
            if rng.random() < 0.04:
                lab = label_isotope(mol, rng)
                if lab is not None:
                    mol, rid = lab, rid + '+iso'
            if add(canon(mol), rid):
                taken += 1

    counts = {}
    for smi, _ in hand + records:
        for k, v in features(Chem.MolFromSmiles(smi)).items():
            counts[k] = counts.get(k, 0) + (1 if v else 0)

    out.write('# canon_set.smi - generated by tests/tools/make_canon_set.py; do not edit.\n')
    out.write('# One molecule per line: RDKit canonical isomeric SMILES <TAB> id (origin:record).\n')
    out.write('# Reference: RDKit %s (Debian python3-rdkit); real molecules from Debian rdkit-data\n'
              % Chem.rdBase.rdkitVersion)
    out.write('# (file list in the generator header); hand-picked cases first.\n')
    out.write('# %d molecules: %d hand-picked, %d from rdkit-data.\n'
              % (len(hand) + len(records), len(hand), len(records)))
    for k in sorted(counts):
        out.write('#   with %-20s %5d\n' % (k + ':', counts[k]))
    out.write('# --- hand-picked\n')
    for smi, rid in hand:
        out.write('%s\t%s\n' % (smi, rid))
    out.write('# --- rdkit-data\n')
    for smi, rid in records:
        out.write('%s\t%s\n' % (smi, rid))


if __name__ == '__main__':
    main()
