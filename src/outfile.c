/* outfile: atomic output files (temporary file, then rename). */
#define _XOPEN_SOURCE 700 /* realpath */
#include "loopwise/outfile.h"

#include <errno.h>
#include <limits.h>
#include <signal.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

/* The one piece of process-wide state in the program: the temporary file
 * being written, so that an interrupting signal can remove it before the
 * process dies. A signal handler has no other way to find it. Only one
 * output file is open at a time. */
static char pending_tmp[PATH_MAX + 64];
static volatile sig_atomic_t pending;

static void on_signal(int sig)
{
    if (pending)
        unlink(pending_tmp);
    signal(sig, SIG_DFL);
    raise(sig);
}

static const int watched[] = { SIGINT, SIGTERM, SIGHUP, SIGQUIT };
enum { NWATCHED = sizeof watched / sizeof watched[0] };

/* Installs the handler on every watched signal that is not ignored (a run
 * under nohup, or in the background of a script, keeps ignoring them). */
static void install_handlers(void)
{
    for (int k = 0; k < NWATCHED; k++) {
        struct sigaction old, sa;
        if (sigaction(watched[k], NULL, &old) != 0 || old.sa_handler == SIG_IGN)
            continue;
        memset(&sa, 0, sizeof sa);
        sa.sa_handler = on_signal;
        sigemptyset(&sa.sa_mask);
        sigaction(watched[k], &sa, NULL);
    }
}

static void block_watched(sigset_t *old)
{
    sigset_t set;
    sigemptyset(&set);
    for (int k = 0; k < NWATCHED; k++)
        sigaddset(&set, watched[k]);
    sigprocmask(SIG_BLOCK, &set, old);
}

/* A target that exists and is not a regular file (a device, a FIFO) cannot
 * be replaced by a rename; it is written in place. A symbolic link is
 * followed, so the file it points to is replaced, not the link. */
static int special_target(const char *path, char **resolved)
{
    struct stat st;
    *resolved = NULL;
    if (lstat(path, &st) != 0)
        return 0;
    if (S_ISLNK(st.st_mode)) {
        *resolved = realpath(path, NULL);
        if (*resolved && stat(*resolved, &st) != 0)
            return 0;
    }
    return !S_ISREG(st.st_mode);
}

/* The mode of the new file: the existing file's, or 0666 less the umask. */
static mode_t new_mode(const char *path)
{
    struct stat st;
    if (stat(path, &st) == 0 && S_ISREG(st.st_mode))
        return st.st_mode & 07777;
    mode_t mask = umask(0);
    umask(mask);
    return 0666 & ~mask;
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
    char *resolved;
    if (special_target(path, &resolved)) {
        free(resolved);
        o->f = fopen(path, "w");
        if (!o->f) {
            int e = errno;
            free(o);
            return lw_error_set(err, LW_EINPUT, "cannot write '%s': %s", path, strerror(e));
        }
        o->direct = 1;
        *out = o;
        return LW_OK;
    }
    const char *target = resolved ? resolved : path;
    size_t len = strlen(target);
    o->path = strdup(target);
    free(resolved);
    o->tmp = malloc(len + 32);
    if (!o->path || !o->tmp || len + 32 > sizeof pending_tmp) {
        outfile_abort(o);
        return lw_error_set(err, LW_ENOMEM, "out of memory (or path too long)");
    }
    /* the temporary sits beside the target so that rename stays atomic */
    const char *slash = strrchr(o->path, '/');
    size_t dirlen = slash ? (size_t)(slash - o->path) + 1 : 0;
    snprintf(o->tmp, len + 32, "%.*s.loopwise-XXXXXX", (int)dirlen, o->path);
    mode_t mode = new_mode(o->path);
    install_handlers();
    sigset_t old;
    block_watched(&old); /* no signal between creating and registering it */
    int fd = mkstemp(o->tmp);
    if (fd >= 0) {
        snprintf(pending_tmp, sizeof pending_tmp, "%s", o->tmp);
        pending = 1;
    }
    sigprocmask(SIG_SETMASK, &old, NULL);
    if (fd < 0) {
        int e = errno;
        free(o->tmp);
        o->tmp = NULL;
        outfile_abort(o);
        return lw_error_set(err, LW_EINPUT, "cannot write '%s': %s", path, strerror(e));
    }
    fchmod(fd, mode);
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
    if (o->direct) {
        if (fclose(o->f) != 0)
            rc = lw_error_set(err, LW_EINPUT, "writing the output failed");
        free(o);
        return rc;
    }
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
    if (o->direct) {
        free(o);
        return;
    }
    if (o->tmp)
        unlink(o->tmp);
    pending = 0;
    free(o->path);
    free(o->tmp);
    free(o);
}
