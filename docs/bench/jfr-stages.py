#!/usr/bin/env python3
"""Shares of JFR execution samples per stage, for the copy and the run phase of EndToEndBenchmark.

Usage: docs/bench/jfr-stages.py BENCH.jfr BROKER.jfr
(run the benchmark with JAVA_TOOL_OPTIONS="-XX:StartFlightRecording=filename=DIR/,settings=profile":
the benchmark's JVM and the embedded broker's child JVM each write a recording into DIR; the
broker's is the one whose threads are named data-plane-kafka-*). A sample is put in the first
stage, from the leaf frame outwards, whose pattern a frame matches. The phases are told apart by
time: the copy phase runs from the first to the last sample of thread bench-copy, the run phase
likewise for bench-bench.
"""
import re, subprocess, sys
from collections import Counter

RUNNER_RULES = [
    ("snapshot (build + encode)", r"OutputJson\.snapshot|PipelineStep\.snapshot|PipelineStep\.takeSnapshot|\.Snapshot\."),
    ("checkpoint (build)", r"PipelineStep\.checkpoint|PipelineProcessor\.checkpoint|CopyProcessor\.checkpoint"),
    ("output encoding", r"OutputJson\."),
    ("decode", r"dev\.runnel\.core\.record\."),
    ("step (featurize, predict, update, metrics)", r"dev\.runnel\.core\.(feature|model|drift|pipeline|evaluate)\."),
    ("produce (send: serialize, append, compress)", r"KafkaProducer\.(send|doSend)"),
    ("commit (offsets, commit, begin)", r"commitTransaction|sendOffsetsToTransaction|beginTransaction|ExactlyOnceRunner\.commit"),
    ("poll (fetch, decompress, parse)", r"KafkaConsumer\.poll|LegacyKafkaConsumer\.poll"),
    ("runner other", r"ExactlyOnceRunner"),
]
BROKER_RULES = [
    ("validate batches (decompress, check)", r"LogValidator"),
    ("append to the log", r"LogSegment\.append|FileRecords\.append|UnifiedLog\.append|LocalLog\.append"),
    ("produce request, rest (verification, callbacks)", r"handleProduceRequest|appendRecords|handleProduceAppend|postVerificationCallback|appendEntries"),
    ("transaction coordinator, markers", r"kafka\.coordinator\.transaction|AddPartitionsToTxn|WriteTxnMarkers|handleEndTxn|TransactionMarker"),
    ("group coordinator, offsets", r"coordinator\.group|TxnOffsetCommit|OffsetCommit|OffsetFetch"),
    ("fetch (read for consumers)", r"handleFetchRequest|fetchMessages|readFromLog|FileRecords\.writeTo|transferTo"),
    ("network, request parsing", r"SocketServer|Selector|KafkaChannel|RequestChannel|NetworkReceive|\.network\."),
    ("metadata, raft, controller", r"raft|metadata|controller|Quorum"),
]

def samples(path):
    out = subprocess.run(["jfr", "print", "--events", "jdk.ExecutionSample", "--stack-depth", "96", path],
                         capture_output=True, text=True, check=True).stdout
    for block in out.split("jdk.ExecutionSample {")[1:]:
        t = re.search(r"startTime = (\S+)", block).group(1)
        th = re.search(r'sampledThread = "([^"]*)"', block)
        frames = re.findall(r"^\s{4}(\S[^\n]*?)(?: line: \d+)?$", block.split("stackTrace = [", 1)[1], re.M)
        yield t, th.group(1) if th else "?", frames

def stage(frames, rules):
    for f in (x.split("(")[0] for x in frames):
        for name, pat in rules:
            if re.search(pat, f):
                return name
    return "other"

def table(title, counts):
    total = sum(counts.values())
    print(f"\n{title} ({total} samples)\n\n| stage | share |\n|---|---|")
    for k, v in counts.most_common():
        print(f"| {k} | {100.0 * v / total:.1f} % |")

def main():
    bench, broker = sys.argv[1], sys.argv[2]
    runner = {"bench-copy": Counter(), "bench-bench": Counter()}
    other = {"bench-copy": Counter(), "bench-bench": Counter()}
    windows = {}
    rows = list(samples(bench))
    for t, th, fr in rows:
        if th in runner:
            w = windows.setdefault(th, [t, t]); w[0] = min(w[0], t); w[1] = max(w[1], t)
    for t, th, fr in rows:
        if th in runner:
            runner[th][stage(fr, RUNNER_RULES)] += 1
        else:
            for ph, (a, b) in windows.items():
                if a <= t <= b:
                    other[ph][re.sub(r"\d+", "N", th)] += 1
    bro = {ph: Counter() for ph in windows}
    for t, th, fr in samples(broker):
        for ph, (a, b) in windows.items():
            if a <= t <= b:
                bro[ph][stage(fr, BROKER_RULES)] += 1
    for ph, label in (("bench-copy", "copy"), ("bench-bench", "run")):
        print(f"\n## {label}: window {windows.get(ph)}")
        table(f"{label}: runner thread", runner[ph])
        table(f"{label}: other threads of the benchmark JVM in the window", other[ph])
        table(f"{label}: broker JVM in the window", bro[ph])
        n = sum(runner[ph].values()) + sum(other[ph].values()) + sum(bro[ph].values())
        print(f"\nsamples in the window: runner {sum(runner[ph].values())}, other client threads {sum(other[ph].values())}, broker {sum(bro[ph].values())} (of {n})")

main()
