#!/usr/bin/env python3
"""Benchmark of `addsite annotate`: records per second, time per record and peak RSS on
generated corpora of 10k, 100k and 1M reactions (bench/gen_corpus.py), single-threaded and
with -j 2. Optional: the same corpus through the RDKit baseline (bench/rdkit_baseline.py) for
the speed ratio.

usage: run_bench.py --addsite PATH [--work DIR] [--sizes 10000,100000,1000000] [--rdkit N]
"""
import argparse
import os
import subprocess
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))


def corpus(work, n):
    path = os.path.join(work, 'corpus_%d.rsmi' % n)
    if not os.path.exists(path):
        with open(path + '.tmp', 'w') as f:
            subprocess.run([sys.executable, os.path.join(HERE, 'gen_corpus.py'), str(n)],
                           stdout=f, check=True)
        os.rename(path + '.tmp', path)
    return path


def run(cmd, stdin_path):
    """Runs cmd with stdin from a file and stdout discarded; returns (seconds, peak RSS kB,
    exit status)."""
    with open(stdin_path, 'rb') as fin, open(os.devnull, 'wb') as fout:
        t0 = time.perf_counter()
        p = subprocess.Popen(cmd, stdin=fin, stdout=fout, stderr=subprocess.DEVNULL)
        _, status, usage = os.wait4(p.pid, 0)
        dt = time.perf_counter() - t0
    return dt, usage.ru_maxrss, os.waitstatus_to_exitcode(status)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument('--addsite', required=True)
    ap.add_argument('--work', default='bench-work')
    ap.add_argument('--sizes', default='10000,100000,1000000')
    ap.add_argument('--rdkit', type=int, default=0,
                    help='also run the RDKit baseline on this many records (0: skip)')
    a = ap.parse_args()
    os.makedirs(a.work, exist_ok=True)
    print('machine: %s, %d cores' % (os.uname().machine, os.cpu_count() or 0))
    print('%10s %4s %10s %12s %10s %9s' % ('records', '-j', 'seconds', 'records/s', 'us/record',
                                            'peak MB'))
    results = {}
    for n in [int(x) for x in a.sizes.split(',')]:
        path = corpus(a.work, n)
        for j in (1, 2):
            dt, rss, rc = run([a.addsite, 'annotate', '-j', str(j), '--on-error', 'ignore', '-'],
                              path)
            if rc not in (0, 3):
                print('annotate failed with exit status %d' % rc)
                return 1
            results[(n, j)] = n / dt
            print('%10d %4d %10.2f %12.0f %10.2f %9.1f' % (n, j, dt, n / dt, dt / n * 1e6,
                                                        rss / 1024.0))
    for n in [int(x) for x in a.sizes.split(',')]:
        if (n, 1) in results and (n, 2) in results:
            print('speed-up -j 2 over -j 1 at %d records: %.2fx' %
                  (n, results[(n, 2)] / results[(n, 1)]))
    if a.rdkit:
        path = corpus(a.work, a.rdkit)
        dt, rss, rc = run(['/usr/bin/python3', os.path.join(HERE, 'rdkit_baseline.py')], path)
        if rc != 0:
            print('RDKit baseline failed (exit %d); is python3-rdkit installed?' % rc)
            return 1
        rate = a.rdkit / dt
        print('RDKit baseline: %d records in %.2f s = %.0f records/s (peak %.1f MB)' %
              (a.rdkit, dt, rate, rss / 1024.0))
        ours = results.get((a.rdkit, 1))
        if ours:
            print('addsite -j 1 / RDKit baseline: %.1fx' % (ours / rate))
    return 0


if __name__ == '__main__':
    sys.exit(main())
