#!/usr/bin/python3
"""check_check_plan.py — verdicts of `addsite check` and rankings of `addsite plan`.

Each check case names its chemistry source. Verdicts are compared by name and exit status
(0 agrees, 1 any other verdict, 2 input error); JSON output must parse and carry the
prediction. RDKit (Debian python3-rdkit) confirms that each recorded product that should
agree is the same molecule as the predicted major product addsite prints.
Environment: ADDSITE. Last line: "N passed, M failed".
"""
import json
import os
import subprocess
import sys

ADDSITE = os.path.abspath(os.environ.get('ADDSITE', 'build/addsite'))
passed = failed = 0
try:
    from rdkit import Chem
except ImportError:  # the check runs without RDKit, minus the cross-check
    Chem = None


def check(ok, what, detail=''):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print(f'FAIL {what} {detail}'[:1500])


def addsite(*args):
    return subprocess.run([ADDSITE] + list(args), capture_output=True, text=True)


# (reaction SMILES, reagents or None, verdict, source)
CASES = [
    ('C=CCCCC>>CCCCC(C)Br', 'HBr', 'agrees',
     'Markovnikov addition of HBr (McMurry, Organic Chemistry, 8th ed., Ch. 7, from memory)'),
    ('C=CCCCC.Br>>CC(Br)CCCC', None, 'agrees',
     'HBr written as a reactant component is read as the reagent (common practice)'),
    ('C=CCCCC>Br>CC(Br)CCCC', None, 'agrees', 'HBr as an agent (Daylight reaction SMILES)'),
    ('C=CCCCC>>BrCCCCCC', 'HBr', 'regioisomer',
     'without peroxide HBr is Markovnikov (McMurry Ch. 7, from memory)'),
    ('C=CCCCC>>BrCCCCCC', 'HBr, ROOR', 'agrees',
     'peroxide effect: anti-Markovnikov bromide (Kharasch & Mayo, J. Am. Chem. Soc. 1933, '
     '55, 2468, from memory)'),
    ('C=CCCCC>>CCCCC(C)O', 'BH3.THF; H2O2, NaOH', 'minor',
     'BH3 on 1-hexene: 94:6 (Brown & Zweifel, J. Am. Chem. Soc. 1960, 82, 4708, from memory)'),
    ('C=CCCCC>>CCCCCCO', '9-BBN; H2O2, NaOH', 'agrees',
     '9-BBN: 99.9% terminal (Brown, Knights & Scouten 1974, from memory)'),
    ('CC(C)(C)C=C>>CC(O)C(C)(C)C', 'H2O, H2SO4', 'minor',
     'acid hydration of 3,3-dimethyl-1-butene rearranges; the direct alcohol is minor (Klein, '
     'Organic Chemistry, 3rd ed., Ch. 8, from memory)'),
    ('CC(C)(C)C=C>>CC(C)C(C)(C)O', 'H2O, H2SO4', 'agrees',
     'methyl shift to the tertiary cation (Klein Ch. 8, from memory)'),
    ('CC(C)(C)C=C>>CC(C)C(C)(C)O', 'Hg(OAc)2, H2O; NaBH4', 'skeleton',
     'oxymercuration does not rearrange (Brown & Geoghegan, J. Am. Chem. Soc. 1967, 89, 1522, '
     'from memory)'),
    ('CC(C)(C)C=C>>CC(C)(C)CCO', 'H2O, H2SO4', 'regioisomer',
     'acid hydration is Markovnikov (common practice)'),
    ('CC1=CCCCC1>>C[C@@H]1CCCC[C@H]1O', '1. BH3-THF; 2. H2O2, NaOH', 'agrees',
     'syn addition: trans-2-methylcyclohexanol, racemic; either enantiomer drawn (McMurry '
     'Ch. 8, from memory)'),
    ('CC1=CCCCC1>>C[C@H]1CCCC[C@@H]1O', '1. BH3-THF; 2. H2O2, NaOH', 'agrees',
     'the other enantiomer of the racemate (McMurry Ch. 8, from memory)'),
    ('CC1=CCCCC1>>C[C@@H]1CCCC[C@@H]1O', '1. BH3-THF; 2. H2O2, NaOH', 'stereo',
     'cis-2-methylcyclohexanol would need anti addition (McMurry Ch. 8, from memory)'),
    ('C/C=C/C>>C[C@@H](Br)[C@H](C)Br', 'Br2', 'agrees',
     'anti addition to trans-2-butene gives meso-2,3-dibromobutane (McMurry Ch. 8, from memory)'),
    ('C/C=C/C>>C[C@@H](Br)[C@@H](C)Br', 'Br2', 'stereo',
     'the racemic dibromide comes from cis-2-butene, not trans (McMurry Ch. 8, from memory)'),
    ('C=CCCCC>>OCC(O)CCCC', 'HBr', 'not_addition', 'a diol is not an HBr adduct (formula)'),
    ('C=CCCCC>>C=CCCCC', 'HBr', 'not_addition', 'unchanged substrate'),
    ('Cc1ccccc1>>BrCc1ccccc1', 'HBr', 'no_alkene',
     'toluene has no C=C outside the aromatic ring (Hückel aromaticity)'),
    ('C=CCCCC>>CCCCC(C)Br.[Na+].[Cl-]', 'HBr', 'agrees', 'counter-ions set aside'),
]

for rxn, reag, want, src in CASES:
    args = ['check', rxn, '--format', 'json'] + (['--reagents', reag] if reag else [])
    p = addsite(*args)
    try:
        d = json.loads(p.stdout)
    except ValueError:
        check(False, f'{rxn} [{reag}]: JSON output', p.stderr)
        continue
    check(d['verdict'] == want, f'{rxn} [{reag}] is {want} ({src})', d.get('reason'))
    check(p.returncode == (0 if want == 'agrees' else 1), f'{rxn}: exit status', p.returncode)
    check(want == 'no_alkene' or isinstance(d.get('prediction'), dict), f'{rxn}: prediction in JSON')
    if Chem and want == 'agrees':
        prod = rxn.split('>')[-1].split('.')[0]
        a = Chem.MolFromSmiles(prod)
        b = Chem.MolFromSmiles(d['predicted_major'])
        same = a is not None and b is not None and \
            Chem.MolToSmiles(a, isomericSmiles=False) == Chem.MolToSmiles(b, isomericSmiles=False)
        check(same, f'{rxn}: RDKit agrees the recorded and predicted constitution match',
              d['predicted_major'])

# strict stereo: a single enantiomer drawn for the racemic 2-bromohexane
p = addsite('check', 'C=CCCCC>>CCCC[C@H](C)Br', '--reagents', 'HBr')
check(p.returncode == 0 and 'racemic' in p.stdout, 'one enantiomer for a racemate agrees, noted')
p = addsite('check', 'C=CCCCC>>CCCC[C@H](C)Br', '--reagents', 'HBr', '--strict-stereo')
check(p.returncode == 1 and p.stdout.startswith('Verdict     stereo'), 'strict stereo flags it')
p = addsite('check', 'CC(C', '--reagents', 'HBr')
check(p.returncode == 2, 'no > in the argument: usage error')
p = addsite('check', 'C=CC(C>>CC', '--reagents', 'HBr')
check(p.returncode == 2 and 'column 5' in p.stderr, 'bad SMILES: exit 2 with its column',
      p.stderr)
p = addsite('check', 'C=CC>>CCC', '--reagents', 'NaOCl')
check(p.returncode == 2 and 'hydroboration' in p.stderr, 'unrecognised reagents list the table')
p = addsite('check', 'C=CC>>CC(C)Br', '--reagents', 'HBr')
check('safety data sheet' in p.stdout and 'Cautions' in p.stdout, 'text output ends with cautions')


def plan(sub, target):
    p = addsite('plan', sub, target, '--format', 'json')
    return p.returncode, json.loads(p.stdout)


# terminal alcohol from a monosubstituted alkene: hydroboration first; bulky boranes at least
# as high as BH3 (Brown's shares, from memory); no acid hydration or oxymercuration (common
# practice: both are Markovnikov)
rc, d = plan('C=CCCCC', 'CCCCCCO')
routes = [(r['reaction'], r['tier']) for r in d['routes']]
check(rc == 0 and d['found'], 'plan 1-hexanol: found')
check(routes and routes[0][0].startswith('hydroboration'), 'plan 1-hexanol: hydroboration first',
      routes)
rank = {r['reaction']: i for i, r in reversed(list(enumerate(d['routes'])))}
check(rank.get('hydroboration_9bbn', 99) <= rank.get('hydroboration', -1) and
      rank.get('hydroboration_sia2bh', 99) <= rank.get('hydroboration', -1),
      'plan 1-hexanol: 9-BBN and Sia2BH rank at least as high as BH3', routes)
check(not any(r[0] in ('acid_hydration', 'oxymercuration') for r in routes),
      'plan 1-hexanol: no acid hydration or oxymercuration offered', routes)
check(all(r['hazards'] for r in d['routes']), 'plan: every route lists hazards')

# internal alcohol without rearrangement: oxymercuration (Brown & Geoghegan 1967, from memory),
# not acid hydration, which gives it only as a minor product beside the rearranged alcohol
rc, d = plan('CC(C)(C)C=C', 'CC(O)C(C)(C)C')
majors = [r['reaction'] for r in d['routes'] if r['tier'] == 'major']
check(majors and majors[0] == 'oxymercuration', 'plan 3,3-dimethyl-2-butanol: oxymercuration',
      majors)
check('acid_hydration' not in majors, 'plan 3,3-dimethyl-2-butanol: not acid hydration')
acid = [r for r in d['routes'] if r['reaction'] == 'acid_hydration']
check(all(r['rearrangement'].startswith('yes') for r in acid),
      'plan: acid hydration flagged as rearranging', acid[:1])

# anti-Markovnikov bromide: radical HBr (Kharasch & Mayo 1933, from memory)
rc, d = plan('C=CCCCC', 'BrCCCCCC')
check(d['routes'] and d['routes'][0]['reaction'] == 'hbr_radical', 'plan 1-bromohexane: HBr/ROOR',
      [r['reaction'] for r in d['routes']][:3])

# nothing in the table makes a ketone from an alkene in one step: say so, show the rest
rc, d = plan('C=CCCCC', 'CC(=O)CCCC')
check(rc == 1 and not d['found'] and len(d['others']) > 10, 'plan with no route: exit 1, others')
p = addsite('plan', 'C=CCCCC', 'CC(=O)CCCC')
check('No single reagent set' in p.stdout, 'plan with no route says so')

print(f'{passed} passed, {failed} failed')
sys.exit(1 if failed else 0)
