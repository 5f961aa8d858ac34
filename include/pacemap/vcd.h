/*
 * vcd.h - waveform of a simulated run in IEEE 1364 Value Change Dump form
 * (IEEE Std 1364-2005, clause 18), for common waveform viewers.
 *
 * One time unit is one cycle (declared as 1 ns).  Variables, all
 * `integer`: per core `coreN` holds the running node's number (node index
 * + 1, 0 when idle; a $comment legend maps numbers to names) and
 * `coreN_io` holds 1 while the core receives, 2 while it sends; per
 * cross-core edge `SRC__DST` holds the tokens buffered on it (delays plus
 * tokens made, minus tokens taken, by the recorded firings).  Only the
 * iterations the simulation recorded (pm_sim_opts.record) appear.  A paced
 * run adds `release`: the number (from 1) of the last sample released.
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
