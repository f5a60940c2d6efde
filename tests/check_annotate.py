#!/usr/bin/python3
"""check_annotate.py — `addsite annotate` keeps one output record per input record, in order.

Checks (common practice for batch tools, see the project's user notes on batch work):
- the committed demo output examples/process_lab_reactions.annotated.jsonl is reproduced byte
  for byte by examples/annotate_demo.sh;
- tests/data/annotate/mixed.smi (good, malformed, blank, CRLF, over-long, bad-byte and
  unterminated lines): as many output records as input lines, every line parses as JSON,
  every malformed record carries an error with code, line and a position, statuses as
  expected; TSV and CSV outputs have one row per record;
- -j 2 and -j 4 output equals -j 1 output byte for byte on a few thousand records; with
  -j N the threads take records in batches, so --on-error stop deep inside a batch, --rejects,
  --progress and the summary, and records long enough to end a batch early are checked
  against -j 1 too;
- error policies: report exits 3, ignore exits 0, stop exits 1 after writing the first bad
  record and leaves no -o file;
- -o to /dev/full fails cleanly (exit 1, a message, no crash); -o FILE is complete on success;
- CSV input with --keep-columns carries the original columns; gzip input reads the same.
Environment: ADDSITE, AS_SOURCE_DIR. Last line: "N passed, M failed".
"""
import csv
import gzip
import io
import json
import os
import re
import subprocess
import sys
import tempfile

ADDSITE = os.path.abspath(os.environ.get('ADDSITE', 'build/addsite'))
SRC = os.environ.get('AS_SOURCE_DIR', os.path.join(os.path.dirname(__file__), '..'))
SAN = re.compile(rb'AddressSanitizer|LeakSanitizer|ThreadSanitizer|runtime error:|Segmentation fault')
passed = failed = 0


def check(ok, what, detail=''):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print(f'FAIL {what} {detail}'[:2000])


def run(args, stdin=None, env=None):
    p = subprocess.run([ADDSITE, 'annotate'] + args, input=stdin, capture_output=True, env=env)
    check(not SAN.search(p.stderr), f'no sanitizer report: {args}', p.stderr[-2000:])
    return p


# 1. the demo output is reproduced byte for byte
demo = os.path.join(SRC, 'examples', 'annotate_demo.sh')
p = subprocess.run(['sh', demo, ADDSITE], capture_output=True)
with open(os.path.join(SRC, 'examples', 'process_lab_reactions.annotated.jsonl'), 'rb') as fh:
    want = fh.read()
check(p.returncode == 0, 'demo exits 0 (malformed records reported under --on-error ignore)', p.returncode)
check(p.stdout == want, 'demo output equals the committed annotated file')
with open(os.path.join(SRC, 'examples', 'process_lab_reactions.smi'), 'rb') as fh:
    nin = len(fh.read().split(b'\n')) - 1
check(len(want.splitlines()) == nin, 'demo: one output record per input line',
      f'{len(want.splitlines())} vs {nin}')

# 2. mixed file
mixed = os.path.join(SRC, 'tests', 'data', 'annotate', 'mixed.smi')
with open(mixed, 'rb') as fh:
    raw = fh.read()
n_lines = raw.count(b'\n') + (0 if raw.endswith(b'\n') else 1)
p = run([mixed, '--max-record', '200'])
check(p.returncode == 3, 'mixed: exit 3 under report', p.returncode)
out = p.stdout.decode('utf-8').splitlines()
check(len(out) == n_lines, 'mixed: output records == input lines', f'{len(out)} vs {n_lines}')
recs = []
for i, line in enumerate(out):
    try:
        recs.append(json.loads(line))
    except ValueError as e:
        check(False, f'mixed: line {i + 1} parses as JSON', str(e))
expect = {  # line: (status, error code or verdict)
    1: ('annotated', 'agrees'), 2: ('error', 'branch'), 3: ('skipped', None),
    4: ('error', 'reaction'), 5: ('skipped', None), 6: ('annotated', 'agrees'),
    7: ('error', 'limit'), 8: ('error', 'no_site'), 9: ('error', 'reagent'),
    10: ('error', 'reagent'), 11: ('error', 'encoding'), 12: ('annotated', 'agrees'),
}
for r in recs:
    st, what = expect.get(r['line'], (None, None))
    check(r['status'] == st, f"mixed line {r['line']}: status {st}", r['status'])
    if st == 'error':
        e = r.get('error') or {}
        check(e.get('code') == what, f"mixed line {r['line']}: error code {what}", e)
        check(e.get('line') == r['line'] and isinstance(e.get('message'), str),
              f"mixed line {r['line']}: error has line and message", e)
        if e.get('field') is not None or r['line'] != 9:  # line 9 names no reagents at all
            check(isinstance(e.get('column'), int) and e['column'] >= 1,
                  f"mixed line {r['line']}: error has a column", e)
    elif st == 'annotated':
        check(r['verdict'] == what, f"mixed line {r['line']}: verdict {what}", r['verdict'])
check([r['line'] for r in recs] == list(range(1, n_lines + 1)), 'mixed: input order kept')
by_line = {r['line']: r for r in recs}
check(by_line[2]['error']['column'] == 6, 'mixed: unclosed branch at column 6',
      by_line[2]['error'])
check(by_line[4]['error']['column'] == 14, "mixed: third '>' at column 14", by_line[4]['error'])
check(by_line[11]['error']['column'] == 5, 'mixed: bad byte at column 5', by_line[11]['error'])
# line 6: 1-hexene + 9-BBN gives 1-hexanol (Brown, Knights & Scouten 1974, from memory): agrees

for fmt in ('tsv', 'csv'):
    p = run([mixed, '--max-record', '200', '--format', fmt])
    text = p.stdout.decode('utf-8')
    if fmt == 'csv':
        rows = list(csv.reader(io.StringIO(text)))
    else:
        rows = [l.split('\t') for l in text.splitlines()]
    check(len(rows) == n_lines + 1, f'{fmt}: header + one row per record',
          f'{len(rows)} vs {n_lines + 1}')
    check(all(len(r) == len(rows[0]) for r in rows), f'{fmt}: every row has every field')

# 3. -j N equals -j 1 byte for byte on a few thousand records
with open(os.path.join(SRC, 'examples', 'process_lab_reactions.smi'), 'rb') as fh:
    lines = fh.read()
with tempfile.TemporaryDirectory() as tmp:
    big = os.path.join(tmp, 'big.smi')
    with open(big, 'wb') as fh:
        for _ in range(100):
            fh.write(lines + raw + b'\n')
    with open(big, 'rb') as fh:
        nbig = fh.read().count(b'\n')
    one = run([big, '-q', '-j', '1', '--max-record', '200'])
    two = run([big, '-q', '-j', '2', '--max-record', '200'])
    four = run([big, '-q', '-j', '4', '--max-record', '200', '--format', 'tsv'])
    four1 = run([big, '-q', '-j', '1', '--max-record', '200', '--format', 'tsv'])
    check(len(one.stdout.splitlines()) == nbig, f'big: {nbig} records out',
          len(one.stdout.splitlines()))
    check(one.stdout == two.stdout, '-j 2 output equals -j 1 byte for byte')
    check(four.stdout == four1.stdout, '-j 4 TSV output equals -j 1 byte for byte')
    gz = os.path.join(tmp, 'big.smi.gz')
    with open(big, 'rb') as src, gzip.open(gz, 'wb') as dst:
        dst.write(src.read())
    g = run([gz, '-q', '-j', '2', '--max-record', '200'])
    check(g.stdout == one.stdout, 'gzip input gives the same output')
    s = run(['-', '-q', '--max-record', '200'], stdin=open(big, 'rb').read())
    check(s.stdout == one.stdout, 'standard input gives the same output')

    # 4. error policies
    p = run([mixed, '--max-record', '200', '--on-error', 'ignore', '-q'])
    check(p.returncode == 0, 'ignore: exit 0', p.returncode)
    for j in ('1', '2'):
        p = run([mixed, '--max-record', '200', '--on-error', 'stop', '-q', '-j', j])
        got = [json.loads(l) for l in p.stdout.decode().splitlines()]
        check(p.returncode == 1, f'stop -j {j}: exit 1', p.returncode)
        check([r['line'] for r in got] == [1, 2] and got[-1]['status'] == 'error',
              f'stop -j {j}: stops after the first bad record (line 2), which is written',
              [r['line'] for r in got])
        target = os.path.join(tmp, f'stop{j}.jsonl')
        p = run([mixed, '--max-record', '200', '--on-error', 'stop', '-q', '-j', j, '-o', target])
        check(p.returncode == 1 and not os.path.exists(target),
              f'stop -j {j} -o: no output file left', os.listdir(tmp))

    # 5. output files
    target = os.path.join(tmp, 'out.jsonl')
    p = run([big, '-q', '-j', '2', '--max-record', '200', '-o', target])
    check(p.returncode == 3 and open(target, 'rb').read() == one.stdout,
          '-o FILE holds the complete output')
    check(sorted(os.listdir(tmp)) == ['big.smi', 'big.smi.gz', 'out.jsonl'],
          '-o leaves no temporary file', os.listdir(tmp))
    p = run([big, '-q', '-o', '/dev/full', '--max-record', '200'])
    check(p.returncode == 1 and b'annotate' in p.stderr, '-o /dev/full fails cleanly',
          (p.returncode, p.stderr[-300:]))
    for j in ('1', '2'):
        p = run([big, '-q', '-j', j, '-o', os.path.join(tmp, 'no', 'such', 'dir.jsonl')])
        check(p.returncode in (1, 2) and b'annotate' in p.stderr,
              f'-o into a missing directory fails cleanly (-j {j})', p.returncode)
    check(sorted(os.listdir(tmp)) == ['big.smi', 'big.smi.gz', 'out.jsonl'],
          'failed writes leave no file', os.listdir(tmp))

# 6. CSV with carried columns
batch = os.path.join(SRC, 'tests', 'data', 'annotate', 'batch.csv')
p = run([batch, '--format', 'csv', '--keep-columns', '-q'])
rows = list(csv.DictReader(io.StringIO(p.stdout.decode())))
check(len(rows) == 4, 'csv: four records', len(rows))
check([r['batch'] for r in rows] == ['B7', 'B7', 'B8', 'B8'], 'csv: batch column carried')
check([r['verdict'] for r in rows] == ['agrees', 'agrees', '', 'agrees'],
      'csv: verdicts (9-BBN anti-Markovnikov; HBr Markovnikov; BH3 on methylenecyclohexane)',
      [r['verdict'] for r in rows])
check(rows[2]['error_code'] == 'branch' and rows[2]['error_column'] == '10',
      'csv: bad substrate reported at its column in the line', rows[2])

# 7. --rejects: the input text of every failed record, the CSV header first
with tempfile.TemporaryDirectory() as tmp:
    rej = os.path.join(tmp, 'rejects.smi')
    p = run([mixed, '--rejects', rej])
    recs = [json.loads(l) for l in p.stdout.decode().splitlines()]
    with open(mixed, 'rb') as fh:
        lines = fh.read().split(b'\n')
    want_rej = [lines[r['line'] - 1].rstrip(b'\r') for r in recs if r['status'] == 'error']
    with open(rej, 'rb') as fh:
        got_rej = fh.read().split(b'\n')[:-1]
    check(len(got_rej) == len(want_rej), 'rejects: one line per error record',
          f'{len(got_rej)} vs {len(want_rej)}')
    check([g[:64] for g in got_rej] == [w[:64] for w in want_rej],
          'rejects: each line is the failed record as read')
    rej_csv = os.path.join(tmp, 'rejects.csv')
    p = run([os.path.join(SRC, 'tests', 'data', 'annotate', 'batch.csv'), '-j', '2',
             '--rejects', rej_csv])
    with open(rej_csv, newline='') as fh:
        rows = list(csv.reader(fh))
    check(len(rows) == 2 and rows[0][0] == 'rxn_id', 'rejects: CSV header then the bad row', rows)
    p = run([mixed, '--rejects', '/dev/full'])
    check(p.returncode == 1, 'rejects on a full disk: exit 1', p.returncode)

# 8. batches under -j N behave as -j 1: a stop deep inside a later batch, rejects, progress
# and summary, long records that end a batch early
good = raw.split(b'\n')[0] + b'\n'            # mixed.smi line 1: annotated, agrees
bad = raw.split(b'\n')[1] + b'\n'             # mixed.smi line 2: an unclosed branch
with tempfile.TemporaryDirectory() as tmp:
    deep = os.path.join(tmp, 'deep.smi')
    with open(deep, 'wb') as fh:
        fh.write(good * 150 + bad + good * 300 + bad + good * 10)
    ref = run([deep, '-q', '-j', '1', '--on-error', 'stop'])
    check(ref.returncode == 1 and len(ref.stdout.splitlines()) == 151,
          'stop -j 1: 150 good records, then the bad one', len(ref.stdout.splitlines()))
    for j in ('2', '3', '5'):
        p = run([deep, '-q', '-j', j, '--on-error', 'stop'])
        check(p.returncode == 1 and p.stdout == ref.stdout and p.stderr == ref.stderr,
              f'stop -j {j} at record 151: same output and message as -j 1',
              (p.returncode, len(p.stdout.splitlines()), p.stderr[-300:]))
    rej1 = os.path.join(tmp, 'rej1.smi')
    p1 = run([deep, '-j', '1', '--rejects', rej1, '--progress'])
    for j in ('2', '4'):
        rejj = os.path.join(tmp, f'rej{j}.smi')
        pj = run([deep, '-j', j, '--rejects', rejj, '--progress'])
        check(pj.returncode == 3 and pj.stdout == p1.stdout, f'-j {j} --rejects: same output')
        check(open(rejj, 'rb').read() == open(rej1, 'rb').read() == bad * 2,
              f'-j {j} --rejects: the two bad lines, in order')
        summ = pj.stderr.decode().splitlines()
        check(any(l.startswith('annotate: 462 records: annotated 460, skipped 0, error 2')
                  for l in summ), f'-j {j}: summary counts every record', pj.stderr[-400:])
        check(re.search(rb'annotate: 462 records, [0-9]+ records/s', pj.stderr) is not None,
              f'-j {j} --progress: final progress line', pj.stderr[-400:])
    # lines over --max-record (limit errors, kept to 100,000 bytes each) end batches by size
    longrec = os.path.join(tmp, 'long.smi')
    with open(longrec, 'wb') as fh:
        for i in range(40):
            fh.write(good * 5 + b'C' * 120000 + b'>>CC\tHBr\n')
    one = run([longrec, '-q', '-j', '1', '--max-record', '100000'])
    check(len(one.stdout.splitlines()) == 240, 'long records: one output record each',
          len(one.stdout.splitlines()))
    for j in ('2', '3'):
        p = run([longrec, '-q', '-j', j, '--max-record', '100000'])
        check(p.stdout == one.stdout and p.returncode == one.returncode,
              f'long records -j {j}: same output as -j 1')

# 9. usage errors
check(run(['--format', 'xml']).returncode == 2, 'bad --format: exit 2')
check(run(['/no/such/file.smi']).returncode == 2, 'missing input: exit 2')
check(run([mixed, '--reagents', 'NaOCl']).returncode == 2, 'unrecognised default reagents: exit 2')

print(f'{passed} passed, {failed} failed')
sys.exit(1 if failed else 0)
