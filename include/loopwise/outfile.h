/* outfile: output files written whole or not at all: a temporary file in
 * the target's directory, renamed into place on commit.
 *
 * Ownership: outfile_open allocates; outfile_commit or outfile_abort
 * releases (exactly one of them, once). */
#ifndef LOOPWISE_OUTFILE_H
#define LOOPWISE_OUTFILE_H

#include <stdio.h>

#include "loopwise/diag.h"

typedef struct outfile {
    FILE *f;          /* write here; stdout when the path is "-" */
    char *path, *tmp;
    int direct;       /* a device or FIFO: written in place, not replaced */
} outfile;

int outfile_open(const char *path, outfile **out, lw_error *err);
int outfile_commit(outfile *o, lw_error *err);
void outfile_abort(outfile *o);

#endif
