#!/usr/bin/python3
"""nx_cycles.py - outside reference for the iteration bound and the critical
loops: enumerates every simple cycle with networkx.simple_cycles (Debian
python3-networkx) and takes the largest (sum of node cycles)/(sum of delays)
with exact fractions.

Input on stdin, any number of graphs:
    graph N M
    T0 T1 ... T(N-1)        node cycles
    U V D                   M lines: edge U -> V with D delays (no parallel edges)
Output, one line per graph:
    none                    no cycle
    P Q K                   bound P/Q (reduced), K critical loops, then K lines
    v0 v1 ...               each critical loop's nodes, rotated to start at
                            its smallest node, lines sorted
Exit status 3 when networkx is missing (the caller skips with a note).
"""
import sys
from fractions import Fraction

try:
    import networkx as nx
except ImportError:
    sys.exit(3)


def solve(n, times, edges):
    g = nx.DiGraph()
    g.add_nodes_from(range(n))
    delay = {}
    for u, v, d in edges:
        g.add_edge(u, v)
        delay[(u, v)] = d
    best = None
    loops = []
    for cyc in nx.simple_cycles(g):
        w = sum(times[v] for v in cyc)
        d = sum(delay[(cyc[i], cyc[(i + 1) % len(cyc)])] for i in range(len(cyc)))
        r = Fraction(w, d)
        if best is None or r > best:
            best, loops = r, []
        if r == best:
            k = cyc.index(min(cyc))
            loops.append(cyc[k:] + cyc[:k])
    if best is None:
        return ["none"]
    lines = sorted(" ".join(str(v) for v in c) for c in loops)
    return ["%d %d %d" % (best.numerator, best.denominator, len(lines))] + lines


def main():
    data = sys.stdin.read().split()
    at, out = 0, []
    while at < len(data):
        assert data[at] == "graph"
        n, m = int(data[at + 1]), int(data[at + 2])
        at += 3
        times = [int(x) for x in data[at:at + n]]
        at += n
        edges = []
        for _ in range(m):
            edges.append((int(data[at]), int(data[at + 1]), int(data[at + 2])))
            at += 3
        out.extend(solve(n, times, edges))
    sys.stdout.write("\n".join(out) + "\n")


main()
