/* outfile: atomic output files (temporary file, then rename). */
#include "loopwise/outfile.h"

#include <errno.h>
#include <signal.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

/* The one piece of process-wide state in the program: the temporary file
 * being written, so that an interrupting signal can remove it before the
 * process dies. A signal handler has no other way to find it. Only one
 * output file is open at a time. */
static char pending_tmp[4096];
static volatile sig_atomic_t pending;

static void on_signal(int sig)
{
    if (pending)
        unlink(pending_tmp);
    signal(sig, SIG_DFL);
    raise(sig);
}

static void watch(const char *tmp)
{
    static const int sigs[] = { SIGINT, SIGTERM, SIGHUP, SIGQUIT };
    snprintf(pending_tmp, sizeof pending_tmp, "%s", tmp);
    pending = 1;
    for (size_t k = 0; k < sizeof sigs / sizeof *sigs; k++) {
        struct sigaction sa;
        memset(&sa, 0, sizeof sa);
        sa.sa_handler = on_signal;
        sigemptyset(&sa.sa_mask);
        sigaction(sigs[k], &sa, NULL);
    }
}

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
    watch(o->tmp);
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
    pending = 0;
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
    pending = 0;
    free(o->path);
    free(o->tmp);
    free(o);
}
