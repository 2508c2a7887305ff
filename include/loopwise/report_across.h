/* report_across: text, JSON and CSV of sizing over corners or Monte Carlo,
 * of two values sized together, and of the two-value map. */
#ifndef LOOPWISE_REPORT_ACROSS_H
#define LOOPWISE_REPORT_ACROSS_H

#include <stdio.h>

#include "loopwise/report_design.h"
#include "loopwise/size_over.h"
#include "loopwise/size_pair.h"
#include "loopwise/sweep_map.h"

/* The params a --set pins (ranges: corner ranges; else distributions), as
 * a header line ("  pinned by --set, not combined: ...", nothing when none)
 * and as the JSON member "pinned": [names]. */
void report_pinned_text(FILE *f, const desc *d, int ranges);
void report_pinned_json(FILE *f, const desc *d, int ranges);
/* Monte Carlo's header line for the params with a corner range and no
 * distribution: they are not drawn, and keep their value (the file's, or a
 * --set's) in every sample; skip is a param left out (the one sized), or -1. */
void report_held_text(FILE *f, const desc *d, int skip);

/* again: the reproduce line of the limiting corner at the answer; density:
 * capacitance per square micrometre (--density) for the area of a
 * capacitor, or NAN. */
void report_size_corners(FILE *f, const desc *d, const char *name, desc_target t,
                         const size_corners_result *r, design_goal g, const char *again,
                         double density, out_format fmt);
/* yield: the target as a fraction; again: the limiting sample's reproduce
 * line (NULL when no sample changed). */
void report_size_mc(FILE *f, const desc *d, const char *name, desc_target t,
                    const size_mc_result *r, design_goal g, double yield, uint64_t seed,
                    const char *again, double density, out_format fmt);
void report_size_pair(FILE *f, const desc *d, const char *const names[2],
                      const desc_target t[2], const size_pair_result *r, design_goal g,
                      double density, out_format fmt);
void report_map(FILE *f, const desc *d, const char *const names[2], const desc_target t[2],
                const map_result *r, design_goal g, out_format fmt);

#endif
