#!/usr/bin/python3
"""cli_ref.py - an independent reference for tests/check_cli.sh.

Reads a .pace scenario on its own (only the statements the shipped demo
scenarios use: title, clock, rate, procs, comm, interconnect, node, edge)
and recomputes what `pacemap check`, `bound` and `dot` must report, with
networkx (Debian python3-networkx): strongly_connected_components for the
loop count, simple_cycles for the iteration bound and its critical loops
(the maximum over directed cycles of node cycles / delays, Ito & Parhi,
J. VLSI Signal Processing 1995).  Exact arithmetic with fractions.

For a multirate scenario the repetition vector is solved here from the
balance equations firings(src) x produce = firings(dst) x consume (Lee &
Messerschmitt, IEEE Trans. Computers 1987), smallest positive integers per
weakly connected part; bound and dot comparisons are then skipped.

usage: cli_ref.py check|bound|dot SCENARIO OUTPUT
  check, bound: OUTPUT is the command's --json output;
  dot: OUTPUT is the DOT text.  Exit 0 when everything agrees, 1 when it
  does not, 77 when the comparison does not apply (multirate).
"""
import math
import json
import re
import sys
from fractions import Fraction

import networkx as nx

RED = "#982327"  # the critical loop's colour, pm_palette_critical


def read_scenario(path):
    nodes, edges, procs = {}, [], 1
    for raw in open(path, encoding="utf-8"):
        line = raw.strip()
        if line.startswith("title"):
            continue
        line = line.split("#", 1)[0].replace("->", " -> ")
        tok = line.split()
        if not tok:
            continue
        if tok[0] == "procs":
            procs = sum(int(t.split(":")[-1]) for t in tok[1:])
        elif tok[0] == "node":
            attrs = dict(t.split("=", 1) for t in tok[2:])
            cyc = attrs["cycles"]
            if ":" in cyc:
                cyc = min(int(p.split(":")[1]) for p in cyc.split(","))
            nodes[tok[1]] = int(cyc)
        elif tok[0] == "edge":
            names = [t for t in tok[1:] if t != "->" and "=" not in t]
            attrs = dict(t.split("=", 1) for t in tok[1:] if "=" in t)
            for a, b in zip(names, names[1:]):
                edges.append((a, b, int(attrs.get("delay", 0)),
                              int(attrs.get("produce", 1)), int(attrs.get("consume", 1))))
    return nodes, edges, procs


def repetition(nodes, edges):
    """Smallest positive integer solution of the balance equations."""
    adj = {v: [] for v in nodes}
    for a, b, _, p, c in edges:
        adj[a].append((b, Fraction(p, c)))
        adj[b].append((a, Fraction(c, p)))
    rep = {}
    for root in nodes:
        if root in rep:
            continue
        part, stack = [root], [root]
        rep[root] = Fraction(1)
        while stack:
            v = stack.pop()
            for w, f in adj[v]:
                if w not in rep:
                    rep[w] = rep[v] * f
                    part.append(w)
                    stack.append(w)
        scale = math.lcm(*(rep[v].denominator for v in part))
        ints = [int(rep[v] * scale) for v in part]
        g = math.gcd(*ints)
        for v, q in zip(part, ints):
            rep[v] = q // g
    for a, b, _, p, c in edges:
        if rep[a] * p != rep[b] * c:
            sys.exit("reference: inconsistent rates")
    return rep


def digraph(nodes, edges):
    g = nx.DiGraph()
    g.add_nodes_from(nodes)
    for a, b, d, _, _ in edges:
        if g.has_edge(a, b):
            sys.exit("reference: parallel edges are not supported here")
        g.add_edge(a, b, delay=d)
    return g


def count_loops(g):
    return sum(1 for c in nx.strongly_connected_components(g)
               if len(c) > 1 or g.has_edge(next(iter(c)), next(iter(c))))


def canon(cycle):
    """A cycle as a tuple starting at its smallest name (rotation-free)."""
    i = cycle.index(min(cycle))
    return tuple(cycle[i:] + cycle[:i])


def bound_and_critical(nodes, g):
    best, crit = None, set()
    for cyc in nx.simple_cycles(g):
        work = sum(nodes[v] for v in cyc)
        dl = sum(g[cyc[i]][cyc[(i + 1) % len(cyc)]]["delay"] for i in range(len(cyc)))
        if dl == 0:
            sys.exit("reference: loop without delay")
        r = Fraction(work, dl)
        if best is None or r > best:
            best, crit = r, set()
        if r == best:
            crit.add(canon(cyc))
    return best, crit


def rat(j):
    return None if j is None else Fraction(j["num"], j["den"])


def problems_check(nodes, edges, g, out):
    rep = repetition(nodes, edges)
    want = {"nodes": len(nodes), "edges": len(edges), "loops": count_loops(g),
            "total_cycles": sum(rep[v] * t for v, t in nodes.items())}
    bad = ["%s: %r, reference %r" % (k, out[k], v) for k, v in want.items() if out[k] != v]
    if out["repetition"] != rep:
        bad.append("repetition %r, reference %r" % (out["repetition"], rep))
    return bad


def problems_bound(nodes, g, procs, out):
    best, crit = bound_and_critical(nodes, g)
    bad = []
    if rat(out["iteration_bound"]) != best:
        bad.append("iteration_bound %r, reference %r" % (out["iteration_bound"], best))
    got = {canon(list(l["nodes"])) for l in out["critical_loops"]}
    if got != crit and not out.get("critical_truncated"):
        bad.append("critical loops %r, reference %r" % (sorted(got), sorted(crit)))
    floor = max(Fraction(sum(nodes.values()), procs), Fraction(max(nodes.values())),
                best if best is not None else Fraction(0))
    if rat(out["lower_bound"]) != floor:
        bad.append("lower_bound %r, reference %r" % (out["lower_bound"], floor))
    if out["total_cycles"] != sum(nodes.values()):
        bad.append("total_cycles %r" % out["total_cycles"])
    return bad


def problems_dot(nodes, g, text):
    _, crit = bound_and_critical(nodes, g)
    want = set()
    for cyc in crit:
        want |= {(cyc[i], cyc[(i + 1) % len(cyc)]) for i in range(len(cyc))}
    got = set()
    for m in re.finditer(r'^\s*"([^"]+)" -> "([^"]+)" \[(.*)\];$', text, re.M):
        if 'color="%s"' % RED in m.group(3):
            got.add((m.group(1), m.group(2)))
    return [] if got == want else ["red edges %r, reference %r" % (sorted(got), sorted(want))]


def main():
    mode, scen, out_path = sys.argv[1:4]
    nodes, edges, procs = read_scenario(scen)
    g = digraph(nodes, edges)
    if mode != "check" and any(p != 1 or c != 1 for _, _, _, p, c in edges):
        print("multirate: comparison not applicable")
        sys.exit(77)
    text = open(out_path, encoding="utf-8").read()
    if mode == "check":
        bad = problems_check(nodes, edges, g, json.loads(text))
    elif mode == "bound":
        bad = problems_bound(nodes, g, procs, json.loads(text))
    else:
        bad = problems_dot(nodes, g, text)
    for b in bad:
        print(b)
    sys.exit(1 if bad else 0)


if __name__ == "__main__":
    main()
