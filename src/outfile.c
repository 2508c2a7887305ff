/* outfile: atomic output files (temporary file, then rename). */
#include "loopwise/outfile.h"

#include <errno.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

int outfile_open(const char *path, outfile **out, lw_error *err)
{
    *out = NULL;
    outfile *o = calloc(1, sizeof *o);
    if (!o)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    if (!strcmp(path, "-")) {
        o->f = stdout;
        *out = o;
        return LW_OK;
    }
    size_t len = strlen(path);
    o->path = strdup(path);
    o->tmp = malloc(len + 32);
    if (!o->path || !o->tmp) {
        outfile_abort(o);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    /* the temporary sits beside the target so that rename stays atomic */
    const char *slash = strrchr(path, '/');
    size_t dirlen = slash ? (size_t)(slash - path) + 1 : 0;
    snprintf(o->tmp, len + 32, "%.*s.loopwise-XXXXXX", (int)dirlen, path);
    int fd = mkstemp(o->tmp);
    if (fd < 0) {
        int e = errno;
        free(o->tmp);
        o->tmp = NULL;
        outfile_abort(o);
        return lw_error_set(err, LW_EINPUT, "cannot write '%s': %s", path, strerror(e));
    }
    fchmod(fd, 0644);
    o->f = fdopen(fd, "w");
    if (!o->f) {
        close(fd);
        outfile_abort(o);
        return lw_error_set(err, LW_ENOMEM, "cannot open a temporary file for '%s'", path);
    }
    *out = o;
    return LW_OK;
}

int outfile_commit(outfile *o, lw_error *err)
{
    int rc = LW_OK;
    if (o->f == stdout) {
        if (fflush(stdout) != 0)
            rc = lw_error_set(err, LW_EINPUT, "writing standard output failed");
        free(o);
        return rc;
    }
    int bad = ferror(o->f) | fclose(o->f);
    o->f = NULL;
    if (bad || rename(o->tmp, o->path) != 0) {
        rc = lw_error_set(err, LW_EINPUT, "cannot write '%s': %s", o->path, strerror(errno));
        unlink(o->tmp);
    }
    free(o->path);
    free(o->tmp);
    free(o);
    return rc;
}

void outfile_abort(outfile *o)
{
    if (!o)
        return;
    if (o->f && o->f != stdout)
        fclose(o->f);
    if (o->tmp)
        unlink(o->tmp);
    free(o->path);
    free(o->tmp);
    free(o);
}
