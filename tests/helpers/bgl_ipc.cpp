// bgl_ipc.cpp - maximum cycle ratio of weighted graphs with the Boost Graph
// Library (boost/graph/howard_cycle_ratio.hpp, maximum_cycle_ratio), for the
// simulator's self-timed theorem test (tests/test_sim_ipc.c).
//
// Input on stdin, any number of instances:
//   n m
//   u v weight delay        (m lines; 0 <= u, v < n; every cycle has delay > 0)
// Output, one line per instance: "W D" - the summed weight and delay of the
// critical cycle Boost returns (the caller recomputes the exact fraction),
// or "none" when the graph has no cycle.
#include <boost/graph/adjacency_list.hpp>
#include <boost/graph/howard_cycle_ratio.hpp>

#include <cstdio>
#include <vector>

using namespace boost;

typedef adjacency_list<vecS, vecS, directedS, no_property,
                       property<edge_weight_t, double, property<edge_weight2_t, double>>>
    Graph;

int main()
{
    long n, m;
    while (std::scanf("%ld %ld", &n, &m) == 2) {
        Graph g(static_cast<size_t>(n));
        std::vector<long> w(m), d(m);
        for (long i = 0; i < m; i++) {
            long u, v;
            if (std::scanf("%ld %ld %ld %ld", &u, &v, &w[i], &d[i]) != 4)
                return 2;
            graph_traits<Graph>::edge_descriptor e = add_edge(u, v, g).first;
            put(edge_weight, g, e, static_cast<double>(w[i]));
            put(edge_weight2, g, e, static_cast<double>(d[i]));
        }
        std::vector<graph_traits<Graph>::edge_descriptor> cycle;
        maximum_cycle_ratio(g, get(vertex_index, g), get(edge_weight, g), get(edge_weight2, g),
                            &cycle);
        if (cycle.empty()) {
            std::printf("none\n");
            continue;
        }
        long sw = 0, sd = 0;
        for (auto &e : cycle) {
            sw += static_cast<long>(get(edge_weight, g, e));
            sd += static_cast<long>(get(edge_weight2, g, e));
        }
        std::printf("%ld %ld\n", sw, sd);
    }
    return 0;
}
