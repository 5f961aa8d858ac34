// bgl_mcr.cpp - outside reference for the iteration bound: runs the Boost
// Graph Library's maximum_cycle_ratio (boost/graph/howard_cycle_ratio.hpp,
// Howard's policy iteration in floating point, Debian libboost-graph-dev)
// on graphs read from a plain edge list, and prints what Boost returns.
//
// Input (file argument or stdin), any number of graphs:
//   graph N M
//   U V W1 W2        M lines: edge U -> V, W1 = cycles of U, W2 = delays
// Output, one line per graph:
//   RATIO K E1 .. EK   Boost's ratio (%.17g) and the edges (input order,
//                      0-based) of the critical cycle Boost returns
//   none               Boost found no cycle
// With -t it also prints "seconds S" (Boost's call alone) to stderr.
//
// Boost's default epsilon (0.005) stops on improvements smaller than that;
// the tests' values are small integers whose ratios differ by far more
// than 1e-9, so the helper passes an epsilon of 1e-9 (Boost's FloatTraits
// parameter) to make Boost's answer the exact optimum.
#include <boost/graph/adjacency_list.hpp>
#include <boost/graph/howard_cycle_ratio.hpp>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <limits>
#include <vector>

namespace {

struct tight_float {
    typedef double value_type;
    static double infinity() { return std::numeric_limits<double>::infinity(); }
    static double epsilon() { return -1e-9; }
};

typedef boost::adjacency_list<
    boost::vecS, boost::vecS, boost::directedS, boost::no_property,
    boost::property<boost::edge_weight_t, double,
                    boost::property<boost::edge_weight2_t, double,
                                    boost::property<boost::edge_index_t, long>>>>
    graph_t;

// Fast reader of unsigned decimal integers from a stdio stream.
struct reader {
    FILE *f;
    int c;
    explicit reader(FILE *fp) : f(fp), c(getc(fp)) {}
    bool skip_to_digit_or_g()
    {
        while (c != EOF && !(c >= '0' && c <= '9') && c != 'g')
            c = getc(f);
        return c != EOF;
    }
    bool word()
    {
        if (!skip_to_digit_or_g())
            return false;
        while (c != EOF && c != ' ' && c != '\n')
            c = getc(f);
        return true;
    }
    bool num(unsigned long long *out)
    {
        while (c != EOF && !(c >= '0' && c <= '9'))
            c = getc(f);
        if (c == EOF)
            return false;
        unsigned long long v = 0;
        while (c >= '0' && c <= '9') {
            v = v * 10 + (unsigned long long)(c - '0');
            c = getc(f);
        }
        *out = v;
        return true;
    }
};

bool run_one(reader &in, bool timing)
{
    unsigned long long n, m;
    if (!in.word() || !in.num(&n) || !in.num(&m))
        return false;
    graph_t g(n);
    for (unsigned long long i = 0; i < m; i++) {
        unsigned long long u, v, w1, w2;
        if (!in.num(&u) || !in.num(&v) || !in.num(&w1) || !in.num(&w2))
            return false;
        boost::add_edge(u, v,
                        graph_t::edge_property_type(
                            (double)w1, graph_t::edge_property_type::next_type(
                                            (double)w2, (long)i)),
                        g);
    }
    std::vector<boost::graph_traits<graph_t>::edge_descriptor> cc;
    auto t0 = std::chrono::steady_clock::now();
    double r = boost::maximum_cycle_ratio(g, boost::get(boost::vertex_index, g),
                                          boost::get(boost::edge_weight, g),
                                          boost::get(boost::edge_weight2, g), &cc,
                                          tight_float());
    auto t1 = std::chrono::steady_clock::now();
    if (timing)
        std::fprintf(stderr, "seconds %.3f\n",
                     std::chrono::duration<double>(t1 - t0).count());
    if (!std::isfinite(r) || cc.empty()) {
        std::printf("none\n");
        return true;
    }
    std::printf("%.17g %zu", r, cc.size());
    auto idx = boost::get(boost::edge_index, g);
    for (auto &e : cc)
        std::printf(" %ld", idx[e]);
    std::printf("\n");
    return true;
}

} // namespace

int main(int argc, char **argv)
{
    bool timing = false;
    const char *path = nullptr;
    for (int i = 1; i < argc; i++) {
        if (std::strcmp(argv[i], "-t") == 0)
            timing = true;
        else
            path = argv[i];
    }
    FILE *f = path ? std::fopen(path, "r") : stdin;
    if (!f) {
        std::perror(path);
        return 1;
    }
    reader in(f);
    while (run_one(in, timing))
        std::fflush(stdout);
    return 0;
}
