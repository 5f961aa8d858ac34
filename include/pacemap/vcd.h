/*
 * vcd.h - waveform of a simulated run in IEEE 1364 Value Change Dump form
 * (IEEE Std 1364-2005, clause 18), for common waveform viewers.
 *
 * Times follow g's clock: $timescale is the coarsest unit of the standard
 * (1, 10 or 100 s .. fs) in which one cycle is a whole number of units
 * (200 MHz: 1 ns, 5 units a cycle), else 1 fs with times rounded; without
 * a clock one cycle is one unit of 1 ns.  One scope per core, `coreN`:
 * integer `node` (node index + 1 of the running node, 0 idle), integer
 * `io` (1 receiving, 2 sending) and a 1-bit wire per node of the core,
 * named after it, 1 while it runs.  Scope `links`: per cross-core edge an
 * integer `SRC__DST`, the tokens buffered on it (delays plus tokens made,
 * minus tokens taken, by the recorded firings).  Reference names keep
 * letters, digits and '_' (others become '_'); a $comment legend gives
 * the clock, node numbers and exact names.  Only the iterations the
 * simulation recorded (pm_sim_opts.record) appear.  A paced
 * run adds an integer `release`: the number (from 1) of the last sample
 * released.
 * Output is deterministic (no date); the writer only reads its inputs.
 */
#ifndef PACEMAP_VCD_H
#define PACEMAP_VCD_H

#include <stdio.h>

#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/sim.h"

/* Write the waveform of result r (simulated from g and m) to `out`.
 * PM_EIO when a write fails, PM_ENOMEM.  O(F log F) for F recorded
 * firings. */
int pm_vcd_write(const pm_graph *g, const pm_map *m, const pm_sim_result *r, FILE *out);

#endif
