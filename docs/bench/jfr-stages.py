#!/usr/bin/env python3
"""Sums `jfr print --events jdk.ExecutionSample` output of one thread by stage: the frame that
PipelineStep.processDecoded called (the decoder, outside it, counts as its own stage), then within
the forecast path's own frames (settle, remember) by the frame they called. Each stage is given
in ns per record: its share of the thread's samples times the thread's ns per record.
Usage: jfr-stages.py SAMPLES.txt THREAD NS_PER_RECORD (docs/bench/forecast-path-profile.sh)."""
import collections
import re
import sys


def samples(path, thread):
    stack, who = None, None
    for line in open(path):
        line = line.rstrip()
        m = re.search(r'sampledThread = "([^"]+)"', line)
        if m:
            who = m.group(1)
        elif line.startswith('  stackTrace = ['):
            stack = []
        elif stack is not None:
            if line.startswith('  ]'):
                if who == thread:
                    yield stack
                stack = None
            else:
                f = re.sub(r'\(.*', '', line.strip())
                if f and f != '...':
                    stack.append('.'.join(f.split('.')[-2:]))


def main():
    path, thread, ns = sys.argv[1], sys.argv[2], float(sys.argv[3])
    stages = collections.Counter()
    inner = {p: collections.Counter() for p in ('PipelineStep.settle', 'PipelineStep.remember', 'PendingForecasts.add')}
    total = 0
    for st in samples(path, thread):
        if not any(f.startswith('PipelineStep.process') for f in st):
            continue
        total += 1
        at = [i for i, f in enumerate(st) if f == 'PipelineStep.processDecoded']
        stages[(st[at[-1] - 1] if at[-1] > 0 else '(processDecoded itself)') if at else '(decoding: outside processDecoded)'] += 1
        for p, c in inner.items():
            at = [i for i, f in enumerate(st) if f == p]
            if at:
                c[st[at[-1] - 1] if at[-1] > 0 else '(itself)'] += 1
    print('%d samples' % total)
    for k, v in stages.most_common(25):
        print('%7.1f ns  %s' % (ns * v / total, k))
    for p, c in inner.items():
        if c:
            print('within %s:' % p)
            for k, v in c.most_common(8):
                print('  %7.1f ns  %s' % (ns * v / total, k))


main()
