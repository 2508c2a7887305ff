/* mc_parts: the samples of a Monte Carlo part written to CSV, and parts
 * merged into the result of one run (see mc_parts.h). */
#include "loopwise/mc_parts.h"

#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/outfile.h"

static const char magic[] = "# loopwise montecarlo samples, format 1";
static const char tail[] = "phase_margin_deg,crossover_hz,gain_margin_db,stable,pass";
enum { TAIL_FIELDS = 5, NUM_MAX = 40 /* bytes of a %.17g number, with room */ };

uint64_t mc_parts_fingerprint(const text_file *t)
{
    /* FNV-1a, 64 bits (Fowler, Noll and Vo): offset basis and prime */
    uint64_t h = 0xcbf29ce484222325ull;
    const uint64_t prime = 0x100000001b3ull;
    for (int k = 0; k < t->nlines; k++) {
        const text_line *l = &t->lines[k];
        for (int j = 0; j < l->ntok; j++) {
            for (const unsigned char *p = (const unsigned char *)l->tok[j].s; *p; p++)
                h = (h ^ *p) * prime;
            h = (h ^ 0x1f) * prime; /* between tokens */
        }
        h = (h ^ '\n') * prime;
    }
    return h;
}

/* ---- writing ---------------------------------------------------------- */

static void field(FILE *f, double v)
{
    fputc(',', f);
    if (isfinite(v))
        fprintf(f, "%.17g", v);
}

int mc_parts_write(const char *path, const char *file, const desc *d, const mc_result *r,
                   const mc_run_id *id, design_goal g, lw_error *err)
{
    outfile *of;
    int rc = outfile_open(path, &of, err);
    if (rc)
        return rc;
    FILE *f = of->f;
    fprintf(f, "%s\n# file %s\n# fingerprint %016llx\n# samples %d\n# seed %llu\n# part %d/%d\n",
            magic, file, (unsigned long long)id->fingerprint, id->total,
            (unsigned long long)id->seed, id->part_k, id->part_m);
    for (int k = 0; k < id->nsets; k++)
        fprintf(f, "# set %s\n", id->sets[k]);
    if (id->fmin_hz > 0)
        fprintf(f, "# fmin %.17g\n", id->fmin_hz);
    if (id->fmax_hz > 0)
        fprintf(f, "# fmax %.17g\n", id->fmax_hz);
    fputs("index", f);
    for (int j = 0; j < r->nparams; j++)
        fprintf(f, ",%s", d->params[r->params[j]].name);
    fprintf(f, ",%s\n", tail);
    for (int s = 0; s < r->nsamples; s++) {
        const design_point *p = &r->pts[s];
        fprintf(f, "%d", r->index[s]);
        for (int j = 0; j < r->nparams; j++)
            field(f, r->values[(size_t)s * (size_t)r->nparams + (size_t)j]);
        if (r->valid[s]) {
            field(f, p->pm_deg);
            field(f, p->crossover_hz);
            field(f, p->gm_db);
            fprintf(f, ",%s,%s\n", p->stable ? "true" : "false",
                    design_meets(p, g) ? "true" : "false");
        } else {
            fputs(",,,,,false\n", f); /* values not allowed: a failure */
        }
    }
    return outfile_commit(of, err);
}

/* ---- reading ---------------------------------------------------------- */

typedef struct reader {
    FILE *f;
    const char *path;
    int line;
    char *buf;                /* the line, cut into fields as it is read */
    char *orig;               /* the line as it stands, for the messages */
    size_t len, cap, limit;
    lw_error *err;
} reader;

static int fail(reader *rd, size_t off, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* An error at byte off of the current line. */
static int fail(reader *rd, size_t off, const char *fmt, ...)
{
    char msg[LW_MSG_MAX];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    lw_error_at(rd->err, rd->line > 0 ? rd->line : 1,
                rd->orig && rd->line > 0 ? text_col(rd->orig, (int)off) : 1, "%s", msg);
    text_error_source(rd->err, rd->line > 0 && rd->orig ? rd->orig : "");
    return LW_EINPUT;
}

/* The next line without its end (LF or CRLF), every byte checked as the
 * description's are. Returns 1, 0 at the end of the file, or an error. */
static int next_line(reader *rd)
{
    int c, any = 0;
    rd->len = 0;
    while ((c = getc_unlocked(rd->f)) != EOF) {
        any = 1;
        if (c == '\n')
            break;
        if (rd->len + 1 >= rd->cap) {
            if (rd->cap >= rd->limit) {
                rd->line++;
                rd->orig[0] = '\0';
                return fail(rd, 0, "line longer than %zu bytes; expected one sample per line "
                            "as --samples-out writes it", rd->limit);
            }
            size_t cap = rd->cap * 2 > rd->limit ? rd->limit : rd->cap * 2;
            char *b = realloc(rd->buf, cap), *o = b ? realloc(rd->orig, cap) : NULL;
            if (b)
                rd->buf = b;
            if (o)
                rd->orig = o;
            if (!b || !o)
                return lw_error_set(rd->err, LW_ENOMEM, "out of memory");
            rd->cap = cap;
        }
        rd->buf[rd->len++] = (char)c;
    }
    if (ferror(rd->f))
        return lw_error_set(rd->err, LW_EINPUT, "%s: read error", rd->path);
    if (!any)
        return 0;
    rd->line++;
    if (rd->len > 0 && rd->buf[rd->len - 1] == '\r')
        rd->len--;
    rd->buf[rd->len] = '\0';
    memcpy(rd->orig, rd->buf, rd->len + 1);
    char what[160];
    int kind;
    long bad = text_find_bad_byte(rd->buf, rd->len, "the end of the line", &kind, what,
                                  sizeof what);
    if (bad >= 0) {
        char shown[LW_SRC_MAX];
        snprintf(shown, sizeof shown, "%.*s", (int)bad, rd->buf); /* the good part only */
        lw_error_at(rd->err, rd->line, text_col(rd->buf, (int)bad), "%s; expected UTF-8 text "
                    "with no control character but tab", what);
        text_error_source(rd->err, shown);
        return LW_EINPUT;
    }
    return 1;
}

/* A number as %.17g writes it: digits, sign, point, exponent; finite. */
static int number(const char *s, double *v)
{
    if (!*s || strspn(s, "0123456789+-.eE") != strlen(s))
        return 0;
    char *end;
    *v = strtod(s, &end);
    return *end == '\0' && isfinite(*v);
}

/* A whole number 0..max */
static int whole(const char *s, unsigned long long max, unsigned long long *v)
{
    if (!*s || strlen(s) > 20 || strspn(s, "0123456789") != strlen(s))
        return 0;
    char *end;
    *v = strtoull(s, &end, 10);
    return *end == '\0' && *v <= max;
}

/* What the '#' lines of one file say. */
typedef struct part_head {
    int have_file, have_fp, have_samples, have_seed, have_part, have_fmin, have_fmax;
    unsigned long long samples, seed;
    int k, m;
    int nsets;
    double fmin, fmax;
} part_head;

static int head_line(reader *rd, const mc_run_id *id, part_head *h)
{
    char *key = rd->buf + 2, *val = strchr(key, ' ');
    if (!val)
        return fail(rd, 2, "a '#' line without a value; expected '# KEY VALUE'");
    *val++ = '\0';
    size_t voff = (size_t)(val - rd->buf);
    unsigned long long u;
    /* each key once (only 'set' repeats): a file of endless '#' lines ends */
    int *once = !strcmp(key, "file") ? &h->have_file : !strcmp(key, "fingerprint") ? &h->have_fp
                : !strcmp(key, "samples") ? &h->have_samples : !strcmp(key, "seed") ? &h->have_seed
                : !strcmp(key, "part") ? &h->have_part : !strcmp(key, "fmin") ? &h->have_fmin
                : !strcmp(key, "fmax") ? &h->have_fmax : NULL;
    if (once && *once)
        return fail(rd, 2, "a second '# %s' line; expected each once", key);
    if (once)
        *once = 1;
    if (!strcmp(key, "file"))
        return LW_OK; /* the path the part was run with: any */
    if (!strcmp(key, "fingerprint")) {
        char mine[24];
        snprintf(mine, sizeof mine, "%016llx", (unsigned long long)id->fingerprint);
        if (strcmp(val, mine))
            return fail(rd, voff, "this part was run on another description (fingerprint %s; "
                        "the file given to the merge has %s): merge with the description the "
                        "parts were run on, unchanged", val, mine);
    } else if (!strcmp(key, "samples")) {
        if (!whole(val, MC_MAX_SAMPLES, &u) || u < 1)
            return fail(rd, voff, "'%s': expected the run's number of samples", val);
        if (id->total && u != (unsigned long long)id->total)
            return fail(rd, voff, "this part belongs to a run of %llu samples, the other parts "
                        "(or --samples) to one of %d", u, id->total);
        h->samples = u;
    } else if (!strcmp(key, "seed")) {
        if (!whole(val, UINT64_MAX, &u))
            return fail(rd, voff, "'%s': expected the run's seed", val);
        if (id->seed_given && u != id->seed)
            return fail(rd, voff, "this part was drawn with seed %llu, the other parts (or "
                        "--seed) with %llu", u, (unsigned long long)id->seed);
        h->seed = u;
    } else if (!strcmp(key, "part")) {
        char *slash = strchr(val, '/');
        unsigned long long k, m;
        if (!slash)
            return fail(rd, voff, "'%s': expected K/M", val);
        *slash = '\0';
        if (!whole(val, MC_MAX_SAMPLES, &k) || !whole(slash + 1, MC_MAX_SAMPLES, &m) || k < 1 ||
            k > m)
            return fail(rd, voff, "expected K/M with 1 <= K <= M");
        h->k = (int)k;
        h->m = (int)m;
    } else if (!strcmp(key, "set")) {
        if (h->nsets >= id->nsets)
            return fail(rd, voff, "this part was run with --set %s, the merge without it: give "
                        "the merge the same --set options as the parts", val);
        if (strcmp(val, id->sets[h->nsets]))
            return fail(rd, voff, "this part was run with --set %s where the merge has --set "
                        "%s: give the merge the same --set options as the parts, in the same "
                        "order", val, id->sets[h->nsets]);
        h->nsets++;
    } else if (!strcmp(key, "fmin") || !strcmp(key, "fmax")) {
        double v, mine = key[2] == 'i' ? id->fmin_hz : id->fmax_hz;
        if (!number(val, &v) || !(v > 0))
            return fail(rd, voff, "'%s': expected a frequency in Hz", val);
        if (v != mine)
            return fail(rd, voff, "this part was run with --%s %s, the merge %s: give the "
                        "merge the same band as the parts", key, val,
                        mine > 0 ? "with another" : "without it");
        if (key[2] == 'i')
            h->fmin = v;
        else
            h->fmax = v;
    } else {
        return fail(rd, 2, "unknown line '# %s'; expected file, fingerprint, samples, seed, "
                    "part, set, fmin or fmax", key);
    }
    return LW_OK;
}

/* The '#' lines, checked against the merge's own run; on success the line
 * read last (in rd->buf) holds the column names. */
static int read_head(reader *rd, mc_run_id *id, part_head *h)
{
    int rc = next_line(rd);
    if (rc == 0 || (rc == 1 && strcmp(rd->buf, magic))) {
        if (rc == 0) {
            rd->line = 1;
            rd->orig[0] = '\0';
        }
        return fail(rd, 0, "not a file of samples written by 'loopwise montecarlo "
                    "--samples-out' (its first line should be '%s')", magic);
    }
    if (rc != 1)
        return rc;
    memset(h, 0, sizeof *h);
    while ((rc = next_line(rd)) == 1 && rd->buf[0] == '#') {
        if (strncmp(rd->buf, "# ", 2))
            return fail(rd, 1, "expected '# KEY VALUE'");
        if ((rc = head_line(rd, id, h)))
            return rc;
    }
    if (rc == 0)
        return fail(rd, 0, "the file ends before its column names");
    if (rc != 1)
        return rc;
    const char *absent = !h->have_fp ? "fingerprint" : !h->have_samples ? "samples"
                         : !h->have_seed ? "seed" : !h->have_part ? "part" : NULL;
    if (absent)
        return fail(rd, 0, "no '# %s' line before the column names; expected the lines "
                    "--samples-out writes", absent);
    if (h->nsets != id->nsets)
        return fail(rd, 0, "this part was run without --set %s, the merge with it: give the "
                    "merge the same --set options as the parts", id->sets[h->nsets]);
    if (!(h->fmin > 0) && id->fmin_hz > 0)
        return fail(rd, 0, "this part was run without --fmin, the merge with it");
    if (!(h->fmax > 0) && id->fmax_hz > 0)
        return fail(rd, 0, "this part was run without --fmax, the merge with it");
    if ((unsigned long long)h->m > h->samples)
        return fail(rd, 0, "part %d/%d of %llu samples: more parts than samples", h->k, h->m,
                    h->samples);
    id->total = (int)h->samples;
    id->seed = h->seed;
    id->seed_given = 1;
    return LW_OK;
}

/* "index,P1,...,Pn,phase_margin_deg,...": the columns of r's params. */
static char *columns(const desc *d, const mc_result *r)
{
    size_t n = sizeof "index" + sizeof tail + 1;
    for (int j = 0; j < r->nparams; j++)
        n += strlen(d->params[r->params[j]].name) + 1;
    char *s = malloc(n);
    if (!s)
        return NULL;
    size_t at = (size_t)snprintf(s, n, "index");
    for (int j = 0; j < r->nparams; j++)
        at += (size_t)snprintf(s + at, n - at, ",%s", d->params[r->params[j]].name);
    snprintf(s + at, n - at, ",%s", tail);
    return s;
}

static int check_columns(reader *rd, const char *header)
{
    if (!strcmp(rd->buf, header))
        return LW_OK;
    size_t at = 0;
    while (rd->buf[at] && rd->buf[at] == header[at])
        at++;
    while (at > 0 && rd->buf[at - 1] != ',')
        at--;
    return fail(rd, at, "the columns differ from what this description draws (with the "
                "merge's --set): expected '%.300s'", header);
}

/* Where each index was read, for duplicates and for what is missing. */
typedef struct seen {
    int *file;    /* 1 + the file's number; 0: not read yet */
    int *line;
    char **fields; /* a row's fields and their byte offsets (room for one row) */
    size_t *offs;
} seen;

/* Cuts the current line at its commas into at most nf fields. Returns the
 * count, or nf + 1 when there are more. */
static int split_fields(reader *rd, char **f, size_t *off, int nf)
{
    int k = 0;
    char *p = rd->buf;
    for (;;) {
        if (k == nf)
            return nf + 1;
        f[k] = p;
        off[k++] = (size_t)(p - rd->buf);
        char *c = strchr(p, ',');
        if (!c)
            return k;
        *c = '\0';
        p = c + 1;
    }
}

/* One row: index, values, margins, stable, pass. */
static int read_row(reader *rd, const part_head *h, const char *const *paths, int fileno,
                    const desc *d, seen *sn, mc_result *r)
{
    int np = r->nparams, nf = 1 + np + TAIL_FIELDS, rc = LW_OK;
    char **f = sn->fields;
    size_t *off = sn->offs;
    int k = split_fields(rd, f, off, nf);
    unsigned long long u = 0;
    if (k != nf) {
        rc = fail(rd, k > nf ? rd->len : 0, "%s fields; expected %d (index, %d drawn value%s, "
                  "phase_margin_deg, crossover_hz, gain_margin_db, stable, pass)",
                  k > nf ? "more" : "fewer", nf, np, np == 1 ? "" : "s");
        goto done;
    }
    if (!whole(f[0], (unsigned long long)r->nsamples - 1, &u)) {
        rc = fail(rd, 0, "'%s': expected a sample index from 0 to %d", f[0], r->nsamples - 1);
        goto done;
    }
    int i = (int)u;
    if (i % h->m != h->k - 1) {
        rc = fail(rd, 0, "sample index %d is not in part %d/%d (its indices i have i mod %d = "
                  "%d)", i, h->k, h->m, h->m, h->k - 1);
        goto done;
    }
    if (sn->file[i]) {
        int other = sn->file[i] - 1;
        rc = fail(rd, 0, "sample index %d was already read at %s:%d: each sample may be given "
                  "once (%s)", i, paths[other], sn->line[i], other == fileno
                  ? "the file repeats it" : !strcmp(paths[other], paths[fileno])
                  ? "the file is given twice" : "is a part given twice?");
        goto done;
    }
    double *v = r->values + (size_t)i * (size_t)np;
    for (int j = 0; j < np && !rc; j++)
        if (!number(f[1 + j], &v[j]))
            rc = fail(rd, off[1 + j], "'%s': expected the drawn value of %s, a finite number",
                      f[1 + j], d->params[r->params[j]].name);
    if (rc)
        goto done;
    const char *st = f[np + 4], *ps = f[np + 5];
    int valid = st[0] != '\0';
    if (valid && strcmp(st, "true") && strcmp(st, "false")) {
        rc = fail(rd, off[np + 4], "'%s': expected true, false, or nothing (drawn values not "
                  "allowed)", st);
        goto done;
    }
    if (strcmp(ps, "true") && strcmp(ps, "false")) {
        rc = fail(rd, off[np + 5], "'%s': expected true or false", ps);
        goto done;
    }
    double m[3];
    for (int c = 0; c < 3 && !rc; c++) {
        const char *x = f[np + 1 + c];
        m[c] = NAN;
        if (!valid && x[0])
            rc = fail(rd, off[np + 1 + c], "a margin for a sample whose drawn values were not "
                      "allowed (its stable field is empty)");
        else if (x[0] && !number(x, &m[c]))
            rc = fail(rd, off[np + 1 + c], "'%s': expected a finite number, or nothing when "
                      "undefined", x);
    }
    if (rc)
        goto done;
    design_point *pt = &r->pts[i];
    memset(pt, 0, sizeof *pt);
    if (valid) {
        pt->pm_deg = m[0];
        pt->crossover_hz = m[1];
        pt->gm_db = m[2];
        pt->stable = !strcmp(st, "true");
        /* not in the file: the report reads none of these but the worst
         * sample's DC gain, which the caller evaluates */
        pt->value = pt->dc = pt->p1_hz = pt->p2_hz = NAN;
        pt->overshoot_pct = pt->settle1_s = pt->peak_db = NAN;
        pt->p2_node = -1;
    }
    r->valid[i] = (unsigned char)valid;
    sn->file[i] = fileno + 1;
    sn->line[i] = rd->line;
done:
    return rc;
}

/* The indices no file held: which file stopped short, or which part of the
 * first file's split no file is. */
static int missing(const char *const *paths, int n, const part_head *heads, const seen *sn,
                   const int *rows, int total, lw_error *err)
{
    int count = 0, first[3], nfirst = 0;
    for (int i = 0; i < total; i++)
        if (!sn->file[i]) {
            if (nfirst < 3)
                first[nfirst++] = i;
            count++;
        }
    if (!count)
        return LW_OK;
    char list[80] = "";
    for (int k = 0; k < nfirst; k++)
        snprintf(list + strlen(list), sizeof list - strlen(list), "%s%d", k ? ", " : "", first[k]);
    for (int k = 0; k < n; k++) {
        int want = (total - heads[k].k) / heads[k].m + 1;
        if (rows[k] < want)
            return lw_error_set(err, LW_EINPUT, "%d of the %d samples are in no file given "
                                "(index %s%s); %s holds %d of the %d samples of part %d/%d: was "
                                "its run cut short?", count, total, list, count > 3 ? ", ..." : "",
                                paths[k], rows[k], want, heads[k].k, heads[k].m);
    }
    int m = heads[0].m, kk = first[0] % m + 1, given = 0;
    for (int k = 0; k < n; k++)
        given |= heads[k].m == m && heads[k].k == kk;
    if (!given)
        return lw_error_set(err, LW_EINPUT, "%d of the %d samples are in no file given (index "
                            "%s%s): part %d/%d is missing; give its file, or run it with --part "
                            "%d/%d --samples-out", count, total, list, count > 3 ? ", ..." : "",
                            kk, m, kk, m);
    return lw_error_set(err, LW_EINPUT, "%d of the %d samples are in no file given (index %s%s); "
                        "give every part's file", count, total, list, count > 3 ? ", ..." : "");
}

int mc_parts_merge(const char *const *paths, int n, const desc *d, mc_run_id *id, design_goal g,
                   mc_result *r, const char **where, lw_error *err)
{
    memset(r, 0, sizeof *r);
    *where = NULL;
    seen sn = { NULL, NULL, NULL, NULL };
    part_head *heads = calloc((size_t)n, sizeof *heads);
    int *rows = calloc((size_t)n, sizeof *rows);
    char *header = NULL;
    /* '#' lines up to 64 KiB; rows as long as the columns say, once known */
    reader rd = { NULL, NULL, 0, NULL, NULL, 0, 256, 64 << 10, err };
    rd.buf = malloc(rd.cap);
    rd.orig = malloc(rd.cap);
    int rc = heads && rows && rd.buf && rd.orig ? LW_OK
             : lw_error_set(err, LW_ENOMEM, "out of memory");
    for (int k = 0; !rc && k < n; k++) {
        rd.path = paths[k];
        rd.line = 0;
        if (!(rd.f = fopen(paths[k], "rb"))) {
            rc = lw_error_set(err, LW_EINPUT, "--merge %s: cannot open the part's file", paths[k]);
            break;
        }
        *where = paths[k];
        if (!(rc = read_head(&rd, id, &heads[k])) && !header) {
            /* the first file fixes the run's size: the arrays for all of it */
            if ((rc = montecarlo_setup(d, id->total, r, err))) {
                *where = NULL;
            } else {
                header = columns(d, r);
                size_t nf = (size_t)(1 + r->nparams + TAIL_FIELDS);
                sn.file = calloc((size_t)id->total, sizeof(int));
                sn.line = malloc(sizeof(int) * (size_t)id->total);
                sn.fields = malloc(sizeof(char *) * nf);
                sn.offs = malloc(sizeof(size_t) * nf);
                if (!header || !sn.file || !sn.line || !sn.fields || !sn.offs)
                    rc = lw_error_set(err, LW_ENOMEM, "out of memory");
                else
                    rd.limit += strlen(header) + nf * NUM_MAX;
            }
        }
        if (!rc)
            rc = check_columns(&rd, header);
        while (!rc && (rc = next_line(&rd)) == 1) {
            rc = read_row(&rd, &heads[k], paths, k, d, &sn, r);
            rows[k]++;
        }
        fclose(rd.f);
        if (!rc || rc == LW_ENOMEM)
            *where = NULL;
    }
    if (!rc && !(rc = missing(paths, n, heads, &sn, rows, id->total, err)))
        rc = montecarlo_summarise(r, g, err);
    free(rd.buf);
    free(rd.orig);
    free(header);
    free(heads);
    free(rows);
    free(sn.file);
    free(sn.line);
    free(sn.fields);
    free(sn.offs);
    if (rc)
        mc_result_free(r);
    return rc;
}
