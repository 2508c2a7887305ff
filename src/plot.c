/* plot: gnuplot jobs in a private directory, run without a shell. */
#include "loopwise/plot.h"

#include <errno.h>
#include <libgen.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "loopwise/outfile.h"

enum { PLOT_MAX_FILES = 16, PLOT_PATH_MAX = 512 };

struct plot_job {
    char dir[PLOT_PATH_MAX];
    char *out_path;
    FILE *script;
    FILE *files[PLOT_MAX_FILES];
    char names[PLOT_MAX_FILES][32];
    int nfiles;
    char pathbuf[PLOT_PATH_MAX + 64];
    char image[PLOT_PATH_MAX + 64];
};

static const char *ext_of(const char *path)
{
    const char *dot = strrchr(path, '.');
    return dot ? dot + 1 : "";
}

void plot_quote(FILE *f, const char *text)
{
    fputc('\'', f);
    for (const unsigned char *p = (const unsigned char *)text; *p; p++) {
        int ok = (*p >= 'a' && *p <= 'z') || (*p >= 'A' && *p <= 'Z') || (*p >= '0' && *p <= '9') ||
                 strchr(" ._,:=+()/-", *p) != NULL;
        fputc(ok ? *p : '?', f);
    }
    fputc('\'', f);
}

/* The script names its files relative to the job directory, where gnuplot
 * runs: a script kept with --keep-script then runs where it is kept. */
const char *plot_path(plot_job *job, const char *name)
{
    (void)job;
    return name;
}

/* The full path of a file in the job directory, for the program itself. */
static const char *job_file(plot_job *job, const char *name)
{
    snprintf(job->pathbuf, sizeof job->pathbuf, "%s/%s", job->dir, name);
    return job->pathbuf;
}

static void remove_job_files(plot_job *job)
{
    for (int k = 0; k < job->nfiles; k++)
        unlink(job_file(job, job->names[k]));
    unlink(job_file(job, "plot.gp"));
    unlink(job->image);
    rmdir(job->dir);
}

void plot_abort(plot_job *job)
{
    if (!job)
        return;
    for (int k = 0; k < job->nfiles; k++)
        if (job->files[k])
            fclose(job->files[k]);
    if (job->script)
        fclose(job->script);
    remove_job_files(job);
    free(job->out_path);
    free(job);
}

int plot_begin(const char *out_path, int width, int height, plot_job **out, lw_error *err)
{
    *out = NULL;
    const char *ext = ext_of(out_path);
    int svg = !strcmp(ext, "svg");
    if (!svg && strcmp(ext, "png"))
        return lw_error_set(err, LW_EINPUT, "-o '%s': the plot file must end in .png or .svg",
                            out_path);
    plot_job *job = calloc(1, sizeof *job);
    if (!job)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    const char *tmp = getenv("TMPDIR");
    if (!tmp || !*tmp || strlen(tmp) > 200 || strspn(tmp, "abcdefghijklmnopqrstuvwxyz"
        "ABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789/._-") != strlen(tmp))
        tmp = "/tmp";
    snprintf(job->dir, sizeof job->dir, "%s/loopwise-plot-XXXXXX", tmp);
    if (!mkdtemp(job->dir) || !(job->out_path = strdup(out_path))) {
        free(job);
        return lw_error_set(err, LW_ENUMERIC, "cannot make a temporary directory for the plot");
    }
    snprintf(job->image, sizeof job->image, "%s/plot.%s", job->dir, svg ? "svg" : "png");
    job->script = fopen(job_file(job, "plot.gp"), "w");
    if (!job->script) {
        plot_abort(job);
        return lw_error_set(err, LW_ENUMERIC, "cannot write the plot script");
    }
    if (svg)
        fprintf(job->script, "set terminal svg size %d,%d dynamic enhanced font 'Sans,11' "
                "background '#ffffff'\n", width, height);
    else
        fprintf(job->script, "set terminal pngcairo size %d,%d enhanced font 'Sans,10' "
                "background '#ffffff'\n", width, height);
    fprintf(job->script, "set output 'plot.%s'\nset encoding utf8\n", svg ? "svg" : "png");
    *out = job;
    return LW_OK;
}

FILE *plot_script(plot_job *job)
{
    return job->script;
}

FILE *plot_data(plot_job *job, const char *name, lw_error *err)
{
    if (job->nfiles == PLOT_MAX_FILES) {
        lw_error_set(err, LW_ENUMERIC, "too many plot data files");
        return NULL;
    }
    FILE *f = fopen(job_file(job, name), "w");
    if (!f) {
        lw_error_set(err, LW_ENUMERIC, "cannot write plot data");
        return NULL;
    }
    snprintf(job->names[job->nfiles], sizeof job->names[0], "%s", name);
    job->files[job->nfiles++] = f;
    return f;
}

/* Starts gnuplot on the script in the job directory (the script's names
 * are relative to it) with stdin closed and stdout/stderr into a log there.
 * Returns its exit status, 127 when not found. */
static int run_gnuplot(plot_job *job)
{
    char log[PLOT_PATH_MAX + 64];
    snprintf(log, sizeof log, "%s/gnuplot.log", job->dir);
    fflush(NULL);
    pid_t pid = fork();
    if (pid < 0)
        return -1;
    if (pid == 0) {
        FILE *l = fopen(log, "w");
        if (l) {
            dup2(fileno(l), 1);
            dup2(fileno(l), 2);
        }
        FILE *nul = fopen("/dev/null", "r");
        if (nul)
            dup2(fileno(nul), 0);
        if (chdir(job->dir) != 0)
            _exit(126);
        char *argv[] = { "gnuplot", "plot.gp", NULL };
        execvp("gnuplot", argv);
        _exit(127);
    }
    int st;
    while (waitpid(pid, &st, 0) < 0)
        if (errno != EINTR)
            return -1;
    return WIFEXITED(st) ? WEXITSTATUS(st) : -1;
}

static int copy_file(const char *from, FILE *to)
{
    FILE *f = fopen(from, "rb");
    if (!f)
        return -1;
    char buf[1 << 14];
    size_t n;
    int bad = 0;
    while ((n = fread(buf, 1, sizeof buf, f)) > 0)
        bad |= fwrite(buf, 1, n, to) != n;
    bad |= ferror(f);
    fclose(f);
    return bad ? -1 : 0;
}

static int copy_to(const char *from, const char *dir, const char *name)
{
    char path[PLOT_PATH_MAX + 64];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    FILE *f = fopen(path, "wb");
    if (!f)
        return -1;
    int rc = copy_file(from, f);
    return fclose(f) || rc ? -1 : 0;
}

int plot_keep_dir_check(const char *dir, lw_error *err)
{
    struct stat sb;
    if (!*dir)
        return lw_error_set(err, LW_EINPUT, "--keep-script '': expected a directory");
    if (strlen(dir) > PLOT_PATH_MAX - 64)
        return lw_error_set(err, LW_EINPUT, "--keep-script: the directory name is too long "
                            "(at most %d bytes)", PLOT_PATH_MAX - 64);
    if (stat(dir, &sb) == 0) {
        if (!S_ISDIR(sb.st_mode))
            return lw_error_set(err, LW_EINPUT, "--keep-script '%s': it exists and is not a "
                                "directory; name a directory to keep the script in", dir);
        if (access(dir, W_OK | X_OK) != 0)
            return lw_error_set(err, LW_EINPUT, "--keep-script '%s': the directory is not "
                                "writable", dir);
        return LW_OK;
    }
    /* not there yet: made (one level) when the picture is drawn, so its
     * parent must be a writable directory */
    char copy[PLOT_PATH_MAX];
    snprintf(copy, sizeof copy, "%s", dir);
    const char *parent = dirname(copy);
    if (stat(parent, &sb) != 0 || !S_ISDIR(sb.st_mode))
        return lw_error_set(err, LW_EINPUT, "--keep-script '%s': '%s' is not an existing "
                            "directory; name a directory that exists, or a new one inside an "
                            "existing one", dir, parent);
    if (access(parent, W_OK | X_OK) != 0)
        return lw_error_set(err, LW_EINPUT, "--keep-script '%s': cannot make it, '%s' is not "
                            "writable", dir, parent);
    return LW_OK;
}

static int keep_files(plot_job *job, const char *keep_dir, lw_error *err)
{
    if (mkdir(keep_dir, 0755) != 0 && errno != EEXIST)
        return lw_error_set(err, LW_EINPUT, "--keep-script '%s': %s", keep_dir, strerror(errno));
    int bad = copy_to(job_file(job, "plot.gp"), keep_dir, "plot.gp");
    for (int k = 0; k < job->nfiles; k++)
        bad |= copy_to(job_file(job, job->names[k]), keep_dir, job->names[k]);
    return bad ? lw_error_set(err, LW_EINPUT, "--keep-script '%s': cannot copy the files", keep_dir)
               : LW_OK;
}

int plot_finish(plot_job *job, const char *keep_dir, lw_error *err)
{
    int bad = 0;
    for (int k = 0; k < job->nfiles; k++) {
        bad |= fclose(job->files[k]) != 0;
        job->files[k] = NULL;
    }
    bad |= fclose(job->script) != 0;
    job->script = NULL;
    int rc = LW_OK;
    if (bad) {
        rc = lw_error_set(err, LW_ENUMERIC, "cannot write the plot files");
        goto done;
    }
    int st = run_gnuplot(job);
    struct stat sb;
    if (st == 127) {
        rc = lw_error_set(err, LW_ENUMERIC, "cannot run gnuplot: it is not installed or not on "
                          "PATH; install the Debian package gnuplot-nox (apt-get install "
                          "gnuplot-nox)");
        goto done;
    }
    if (st != 0 || stat(job->image, &sb) != 0 || sb.st_size == 0) {
        rc = lw_error_set(err, LW_ENUMERIC, "gnuplot failed (exit status %d) drawing '%s'; "
                          "check the gnuplot-nox package", st, job->out_path);
        goto done;
    }
    /* the kept files first: when they cannot be written, no image either */
    if (keep_dir && (rc = keep_files(job, keep_dir, err)))
        goto done;
    outfile *of;
    if ((rc = outfile_open(job->out_path, &of, err)))
        goto done;
    if (copy_file(job->image, of->f) != 0) {
        outfile_abort(of);
        rc = lw_error_set(err, LW_EINPUT, "cannot write '%s'", job->out_path);
        goto done;
    }
    rc = outfile_commit(of, err);
done:
    unlink(job_file(job, "gnuplot.log"));
    remove_job_files(job);
    free(job->out_path);
    free(job);
    return rc;
}
