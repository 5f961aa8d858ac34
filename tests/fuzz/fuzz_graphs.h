/*
 * fuzz_graphs.h - the two fixed scenarios that map inputs are read against,
 * shared by fuzz_map.c and tests/test_fuzz_regress.c so a saved input is
 * replayed against exactly the graphs the fuzzer used.  Invented for
 * testing.  Not part of the library.
 */
#ifndef PACEMAP_FUZZ_GRAPHS_H
#define PACEMAP_FUZZ_GRAPHS_H

/* Two dsp cores and a host core: per-class cycles, a class-only node, a pin
 * to a core and a pin to a class, a loop with a delay. */
static const char fuzz_classes_scenario[] =
    "# invented test platform: two dsp cores and a host core\n"
    "procs dsp:2 host:1\n"
    "node src cycles=4\n"
    "node fir cycles=dsp:12,host:30\n"
    "node pin0 cycles=3 pin=0\n"
    "node ctl cycles=host:7\n"
    "node mix cycles=5 pin=dsp\n"
    "edge src -> fir -> pin0 -> mix\n"
    "edge ctl -> mix\n"
    "edge mix -> ctl delay=1\n";

/* Four identical cores, one pinned node. */
static const char fuzz_plain_scenario[] =
    "# invented test platform: four identical cores\n"
    "procs 4\n"
    "node a cycles=1\n"
    "node b cycles=2\n"
    "node c cycles=3\n"
    "node d cycles=4 pin=3\n"
    "edge a -> b -> c\n"
    "edge c -> d\n";

#endif
