/*
 * sched_checker.h - an independent validity check of one-iteration
 * schedules (pm_schedule), for the tests.  It re-derives every rule of
 * include/pacemap/sched.h from the graph alone and shares no code with the
 * scheduler (sched/ is not used beyond graph accessors).
 */
#ifndef PACEMAP_TEST_SCHED_CHECKER_H
#define PACEMAP_TEST_SCHED_CHECKER_H

#include "pacemap/graph.h"
#include "pacemap/sched.h"

/* NULL when s is a valid schedule of g, else a description of the first
 * violation (in a static buffer). Checks: durations, pins and classes,
 * precedence through transfer times, send/recv lengths, no overlap on a
 * core (nodes, sends, receives), bus serialisation, makespan, busy. */
const char *sched_checker_verify(const pm_graph *g, const pm_schedule *s);

/* Critical path of the zero-delay DAG with the smallest cycles of each
 * node, no transfer cost: a lower bound on every makespan. */
int64_t sched_checker_critical_path(const pm_graph *g);

#endif
