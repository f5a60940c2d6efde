#!/usr/bin/env python3
"""Benchmark of `addsite annotate`: records per second, time per record and peak RSS on
generated corpora of 10k, 100k and 1M reactions (bench/gen_corpus.py), single-threaded and
with -j 2. Each run is repeated (--repeat, default 3) and the median time is reported, with
the runs of -j 1 and -j 2 interleaved so that load from other programs on the machine falls
on both alike; peak RSS is the largest of the repeats. Optional: the same corpus through the
RDKit baseline (bench/rdkit_baseline.py) for the speed ratio.

usage: run_bench.py --addsite PATH [--work DIR] [--sizes 10000,100000,1000000] [--repeat N]
                    [--rdkit N]
"""
import argparse
import os
import statistics
import subprocess
import sys
import tempfile
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
    """Runs cmd with stdin from a file and stdout discarded; returns (seconds, peak RSS kB or
    None, exit status). Peak RSS comes from GNU time (Debian package `time`) when installed:
    a child's own ru_maxrss would also count the Python interpreter it was forked from."""
    gnu_time = '/usr/bin/time' if os.access('/usr/bin/time', os.X_OK) else None
    rss_file = None
    if gnu_time:
        fd, rss_file = tempfile.mkstemp(prefix='as-bench-', suffix='.rss')
        os.close(fd)
        cmd = [gnu_time, '-f', '%M', '-o', rss_file] + cmd
    with open(stdin_path, 'rb') as fin, open(os.devnull, 'wb') as fout:
        t0 = time.perf_counter()
        p = subprocess.run(cmd, stdin=fin, stdout=fout, stderr=subprocess.DEVNULL)
        dt = time.perf_counter() - t0
    rss = None
    if rss_file:
        try:
            with open(rss_file) as f:
                rss = int(f.read().strip().splitlines()[-1])
        except (OSError, ValueError, IndexError):
            rss = None
        os.unlink(rss_file)
    return dt, rss, p.returncode


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument('--addsite', required=True)
    ap.add_argument('--work', default='bench-work')
    ap.add_argument('--sizes', default='10000,100000,1000000')
    ap.add_argument('--repeat', type=int, default=3,
                    help='runs per size and thread count; the median time is reported')
    ap.add_argument('--rdkit', type=int, default=0,
                    help='also run the RDKit baseline on this many records (0: skip)')
    a = ap.parse_args()
    os.makedirs(a.work, exist_ok=True)
    print('machine: %s, %d cores%s' % (os.uname().machine, os.cpu_count() or 0,
                                        '' if os.access('/usr/bin/time', os.X_OK) else
                                        ' (install the Debian package time for peak RSS)'))
    print('%10s %4s %10s %12s %10s %9s' % ('records', '-j', 'seconds', 'records/s', 'us/record',
                                            'peak MB'))
    results = {}
    for n in [int(x) for x in a.sizes.split(',')]:
        path = corpus(a.work, n)
        times = {1: [], 2: []}
        peak = {1: None, 2: None}
        for _ in range(max(1, a.repeat)):
            for j in (1, 2):
                dt, rss, rc = run([a.addsite, 'annotate', '-j', str(j), '--on-error', 'ignore',
                                   '-'], path)
                if rc not in (0, 3):
                    print('annotate failed with exit status %d' % rc)
                    return 1
                times[j].append(dt)
                if rss is not None:
                    peak[j] = max(peak[j] or 0, rss)
        for j in (1, 2):
            dt = statistics.median(times[j])
            rss = peak[j]
            results[(n, j)] = n / dt
            print('%10d %4d %10.2f %12.0f %10.2f %9s' % (n, j, dt, n / dt, dt / n * 1e6,
                                                      '%.1f' % (rss / 1024.0) if rss else 'n/a'))
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
        print('RDKit baseline: %d records in %.2f s = %.0f records/s' % (a.rdkit, dt, rate))
        ours = results.get((a.rdkit, 1))
        if ours:
            print('addsite -j 1 / RDKit baseline: %.1fx' % (ours / rate))
    return 0


if __name__ == '__main__':
    sys.exit(main())
