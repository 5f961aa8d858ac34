#!/bin/sh
# check_sdf_demo.sh - the invented demo scenarios/rx_decimating.pace says in
# its header what the tool should show; check those claims and the
# single-rate expansion against an independent computation:
#   - the repetition vector balances every edge and is the smallest one;
#   - the expansion, redone token by token in Python, has the same firings
#     and the same edges (delays, words), with one block per producer firing
#     (the default transfers);
#   - the iteration bound of the expansion, found by enumerating its simple
#     cycles with networkx (networkx.simple_cycles), is the 12250 cycles the
#     header states, and the total work is 16960.
# Skips with a note when the helper is not built.
helper="$PM_HELPERS/sdf_dump"
if [ ! -x "$helper" ]; then
    echo "note: $helper not built, skipping"
    exit 0
fi
out=$(mktemp)
trap 'rm -f "$out"' EXIT
"$helper" scenarios/rx_decimating.pace > "$out" || exit 1
/usr/bin/python3 - "$out" scenarios/rx_decimating.pace <<'PY'
import sys
from fractions import Fraction
from math import gcd
from functools import reduce
import networkx as nx

nodes, edges, rep, xnodes, xedges = {}, [], {}, {}, {}
for line in open(sys.argv[1]):
    f = line.split()
    if f[0] == "node": nodes[f[1]] = int(f[2])
    elif f[0] == "edge": edges.append((f[1], f[2], *map(int, f[3:])))
    elif f[0] == "rep": rep[f[1]] = int(f[2])
    elif f[0] == "xnode": xnodes[f[1]] = int(f[2])
    elif f[0] == "xedge":
        k = (f[1], f[2], int(f[3]))
        xedges[k] = xedges.get(k, 0) + int(f[4])

# claims of the scenario header
assert rep == dict(adc=8, nco=8, mix=8, dec4=2, chan=2, dec2=1, track=1), rep
assert sum(nodes[v] * rep[v] for v in nodes) == 16960
# balance on every edge, smallest vector (the graph is connected)
for u, v, p, c, d, w in edges:
    assert rep[u] * p == rep[v] * c
assert reduce(gcd, rep.values()) == 1

# independent expansion, token by token: the d initial tokens are the last
# d tokens earlier iterations made (newest first: global firing -1, ...)
def name(v, i): return v if rep[v] == 1 else "%s#%d" % (v, i)
want_nodes = {name(v, i): nodes[v] for v in nodes for i in range(rep[v])}
want_edges = {}
def add(k, words): want_edges[k] = want_edges.get(k, 0) + words
def per_token(u, v, p, c, d, w):
    for t in range(rep[u] * p):
        firing = (t - d) // p if t >= d else -1 - (d - 1 - t) // p
        it = 0
        while firing < 0:
            firing += rep[u]; it -= 1
        add((name(u, firing), name(v, t // c), -it), w)
# block transfers (the default): firing I of u (iteration 0) makes tokens
# I*p+d .. I*p+d+p-1, read by global consumer firings J = t // c; the block
# goes whole (p*w words) to its first reader J0, each later reader J follows
# reader J-1 with no words (one delay when J starts a new iteration)
def block(u, v, p, c, d, w):
    for i in range(rep[u]):
        readers = sorted({t // c for t in range(i * p + d, i * p + d + p)})
        j0 = readers[0]
        add((name(u, i), name(v, j0 % rep[v]), j0 // rep[v]), p * w)
        for j in readers[1:]:
            add((name(v, (j - 1) % rep[v]), name(v, j % rep[v]),
                 j // rep[v] - (j - 1) // rep[v]), 0)
per_token_mode = "transfer=token" in open(sys.argv[2]).read()
for u, v, p, c, d, w in edges:
    (per_token if per_token_mode or u == v else block)(u, v, p, c, d, w)
assert xnodes == want_nodes, "expanded nodes differ"
assert xedges == want_edges, "expanded edges differ"

# iteration bound of the expansion by enumerating simple cycles
g = nx.DiGraph()
for (a, b, d) in xedges:
    if not g.has_edge(a, b) or g[a][b]["d"] > d:
        g.add_edge(a, b, d=d)
best = max(Fraction(sum(xnodes[x] for x in cyc),
                    sum(g[cyc[i]][cyc[(i + 1) % len(cyc)]]["d"] for i in range(len(cyc))))
           for cyc in nx.simple_cycles(g))
assert best == 12250, best
print("rx_decimating: repetition, expansion and bound 12250 agree")
PY
