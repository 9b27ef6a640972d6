/* timer.c — phase timings of one run: wall time, bytes and transforms per named phase on each
 * rank, reduced over the ranks and written by rank 0 as JSON (docs/timings.schema.json).
 * Invariant: every rank meets the same phases in the same order; hx_timer_write checks it
 * (one reduction) before it reduces the phases by position. Recording never fails loudly: an
 * allocation failure while timing is remembered and reported by hx_timer_write. */
#include "helmix/timer.h"

#include <cjson/cJSON.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>

#include "check.h"
#include "helmix/version.h"

#define HX_TIMER_SCHEMA "helmix-timings"
#define HX_TIMER_SCHEMA_VERSION 1

enum { NAME_LEN = 48 };

typedef struct phase {
    char name[NAME_LEN];
    double seconds, bytes, since; /* since: MPI_Wtime at begin, < 0 when not running */
    long long transforms;
} phase;

typedef struct note {
    char key[NAME_LEN];
    double value;
    char *text; /* NULL for a number */
} note;

struct hx_timer {
    char command[NAME_LEN];
    double t0;
    phase *ph;
    int nph, cap_ph;
    note *notes;
    int nnotes, cap_notes;
    int64_t grid[3]; /* 0: not given */
    int lost;        /* an allocation failed while recording */
};

hx_status hx_timer_create(hx_timer **t, const char *command)
{
    hx_status st = HX_OK;
    hx_timer *p = NULL;
    *t = NULL;
    HX_ALLOC(p, 1);
    snprintf(p->command, sizeof p->command, "%s", command ? command : "");
    p->t0 = MPI_Wtime();
    *t = p;
fail:
    return st;
}

void hx_timer_destroy(hx_timer **t)
{
    if (!t || !*t) return;
    for (int i = 0; i < (*t)->nnotes; i++) free((*t)->notes[i].text);
    free((*t)->notes);
    free((*t)->ph);
    free(*t);
    *t = NULL;
}

/* The phase called name, created at the end of the list on first use; NULL if out of memory. */
static phase *find(hx_timer *t, const char *name)
{
    for (int i = 0; i < t->nph; i++)
        if (!strncmp(t->ph[i].name, name, NAME_LEN - 1)) return &t->ph[i];
    if (t->nph == t->cap_ph) {
        int cap = t->cap_ph ? 2 * t->cap_ph : 16;
        phase *grown = realloc(t->ph, (size_t)cap * sizeof *grown);
        if (!grown) {
            t->lost = 1;
            return NULL;
        }
        t->ph = grown, t->cap_ph = cap;
    }
    phase *p = &t->ph[t->nph++];
    memset(p, 0, sizeof *p);
    snprintf(p->name, sizeof p->name, "%s", name);
    p->since = -1;
    return p;
}

void hx_timer_begin(hx_timer *t, const char *name)
{
    if (!t || !name) return;
    phase *p = find(t, name);
    if (p) p->since = MPI_Wtime();
}

void hx_timer_end(hx_timer *t, const char *name, double bytes, int transforms)
{
    if (!t || !name) return;
    double now = MPI_Wtime();
    phase *p = find(t, name);
    if (!p) return;
    if (p->since >= 0) p->seconds += now - p->since; /* an end without a begin adds no time */
    p->since = -1;
    p->bytes += bytes > 0 ? bytes : 0;
    p->transforms += transforms > 0 ? transforms : 0;
}

/* The note called key (replaced when noted again), or NULL if out of memory. */
static note *find_note(hx_timer *t, const char *key)
{
    for (int i = 0; i < t->nnotes; i++)
        if (!strncmp(t->notes[i].key, key, NAME_LEN - 1)) {
            free(t->notes[i].text);
            t->notes[i].text = NULL;
            return &t->notes[i];
        }
    if (t->nnotes == t->cap_notes) {
        int cap = t->cap_notes ? 2 * t->cap_notes : 8;
        note *grown = realloc(t->notes, (size_t)cap * sizeof *grown);
        if (!grown) {
            t->lost = 1;
            return NULL;
        }
        t->notes = grown, t->cap_notes = cap;
    }
    note *n = &t->notes[t->nnotes++];
    memset(n, 0, sizeof *n);
    snprintf(n->key, sizeof n->key, "%s", key);
    return n;
}

void hx_timer_note(hx_timer *t, const char *key, double value)
{
    if (!t || !key) return;
    note *n = find_note(t, key);
    if (n) n->value = value;
}

void hx_timer_note_text(hx_timer *t, const char *key, const char *value)
{
    if (!t || !key) return;
    note *n = find_note(t, key);
    if (n && !(n->text = strdup(value ? value : ""))) t->lost = 1;
}

void hx_timer_grid(hx_timer *t, const int64_t n[3])
{
    if (!t || !n) return;
    memcpy(t->grid, n, sizeof t->grid);
}

/* FNV-1a over the phase names in order: equal on every rank when they met the same phases. */
static unsigned long long names_hash(const hx_timer *t)
{
    unsigned long long h = 1469598103934665603ULL;
    for (int i = 0; i < t->nph; i++)
        for (const char *c = t->ph[i].name;; c++) {
            h = (h ^ (unsigned char)*c) * 1099511628211ULL;
            if (!*c) break;
        }
    return h;
}

static long long peak_rss_bytes(void)
{
    struct rusage ru;
    return getrusage(RUSAGE_SELF, &ru) == 0 ? (long long)ru.ru_maxrss * 1024LL : 0; /* ru_maxrss in KiB (Linux) */
}

static cJSON *stats(double min, double mean, double max)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddNumberToObject(o, "min", min);
    cJSON_AddNumberToObject(o, "mean", mean);
    cJSON_AddNumberToObject(o, "max", max);
    return o;
}

/* sum / n kept inside [lo, hi]: the rounding of a sum of equal values may step an ulp outside. */
static double mean(double sum, int n, double lo, double hi) { return fmin(fmax(sum / n, lo), hi); }

/* The reduced numbers rank 0 writes. */
typedef struct reduced {
    int size;
    double *smin, *smax, *ssum, *bsum, *bmax, *tsum, *tmax; /* per phase */
    double total[3];                                        /* min, sum, max of the wall time */
    long long *rss;                                         /* per rank */
} reduced;

static char *render(const hx_timer *t, const reduced *r)
{
    cJSON *root = cJSON_CreateObject();
    if (!root) return NULL;
    cJSON_AddStringToObject(root, "schema", HX_TIMER_SCHEMA);
    cJSON_AddNumberToObject(root, "schema_version", HX_TIMER_SCHEMA_VERSION);
    cJSON_AddStringToObject(root, "command", t->command);
    cJSON_AddStringToObject(root, "helmix_version", HX_VERSION);
    cJSON_AddNumberToObject(root, "ranks", r->size);
    double threads = 1;
    for (int i = 0; i < t->nnotes; i++)
        if (!strcmp(t->notes[i].key, "threads") && !t->notes[i].text && t->notes[i].value >= 1)
            threads = floor(t->notes[i].value); /* a count: the schema wants an integer */
    cJSON_AddNumberToObject(root, "threads", threads);
    if (t->grid[0] > 0) {
        cJSON *g = cJSON_AddArrayToObject(root, "grid");
        for (int a = 0; a < 3; a++) cJSON_AddItemToArray(g, cJSON_CreateNumber((double)t->grid[a]));
        cJSON_AddNumberToObject(root, "cells", (double)t->grid[0] * (double)t->grid[1] * (double)t->grid[2]);
    }
    cJSON *notes = cJSON_AddObjectToObject(root, "notes");
    for (int i = 0; i < t->nnotes; i++)
        if (t->notes[i].text) cJSON_AddStringToObject(notes, t->notes[i].key, t->notes[i].text);
        else cJSON_AddNumberToObject(notes, t->notes[i].key, t->notes[i].value);
    cJSON *phases = cJSON_AddArrayToObject(root, "phases");
    for (int i = 0; i < t->nph; i++) {
        cJSON *p = cJSON_CreateObject();
        cJSON_AddStringToObject(p, "name", t->ph[i].name);
        cJSON_AddItemToObject(p, "seconds", stats(r->smin[i], mean(r->ssum[i], r->size, r->smin[i], r->smax[i]), r->smax[i]));
        cJSON_AddNumberToObject(p, "bytes_total", r->bsum[i]);
        cJSON_AddNumberToObject(p, "bytes_max_per_rank", r->bmax[i]);
        cJSON_AddNumberToObject(p, "transforms", r->tmax[i]);
        cJSON_AddNumberToObject(p, "transforms_total", r->tsum[i]);
        cJSON_AddItemToArray(phases, p);
    }
    cJSON_AddItemToObject(root, "total_seconds", stats(r->total[0], mean(r->total[1], r->size, r->total[0], r->total[2]), r->total[2]));
    cJSON *rss = cJSON_AddObjectToObject(root, "peak_rss_bytes");
    cJSON *per = cJSON_AddArrayToObject(rss, "per_rank");
    long long most = 0;
    for (int i = 0; i < r->size; i++) {
        cJSON_AddItemToArray(per, cJSON_CreateNumber((double)r->rss[i]));
        most = r->rss[i] > most ? r->rss[i] : most;
    }
    cJSON_AddNumberToObject(rss, "max", (double)most);
    char *text = cJSON_Print(root);
    cJSON_Delete(root);
    return text;
}

/* Rank 0: text to path.partial, then rename, so a reader never sees half a document. */
static hx_status write_file(const char *path, const char *text)
{
    char tmp[4200];
    if (snprintf(tmp, sizeof tmp, "%s.partial", path) >= (int)sizeof tmp)
        return hx_error_set(HX_ERR_ARG, "--timings %s: the path is too long", path);
    FILE *fp = fopen(tmp, "w");
    if (!fp) return hx_error_set(HX_ERR_IO, "cannot write the timings %s: %s", tmp, strerror(errno));
    int ok = fputs(text, fp) >= 0 && fputc('\n', fp) != EOF;
    if (fclose(fp) != 0) ok = 0;
    if (!ok) {
        remove(tmp);
        return hx_error_set(HX_ERR_IO, "cannot write the timings %s", tmp);
    }
    if (rename(tmp, path) != 0) {
        int e = errno;
        remove(tmp);
        return hx_error_set(HX_ERR_IO, "cannot rename %s to %s: %s", tmp, path, strerror(e));
    }
    return HX_OK;
}

hx_status hx_timer_write(hx_timer *t, const char *path, MPI_Comm comm)
{
    hx_status st = HX_OK;
    int rank = 0, size = 1, n = t ? t->nph : 0;
    double *buf = NULL, *all = NULL, *sums = NULL, *smin = NULL;
    long long rss = peak_rss_bytes(), *rss_all = NULL;
    char *text = NULL;
    if (!t || !path) return hx_error_set(HX_ERR_ARG, "timer: %s is NULL", !t ? "the timer" : "the path");
    double now = MPI_Wtime();
    for (int i = 0; i < n; i++) /* a phase still running ends here */
        if (t->ph[i].since >= 0) t->ph[i].seconds += now - t->ph[i].since, t->ph[i].since = -1;
    HX_MPI(MPI_Comm_rank(comm, &rank));
    HX_MPI(MPI_Comm_size(comm, &size));
    /* one reduction agrees on the phases and on lost records: max of (n, hash, lost) and of their negations */
    unsigned long long h = names_hash(t);
    long long chk[6] = {n, -n, (long long)(h >> 1), -(long long)(h >> 1), t->lost, -t->lost};
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, chk, 6, MPI_LONG_LONG, MPI_MAX, comm));
    if (chk[4] > 0) HX_FAIL(HX_ERR_MEM, "out of memory while recording the timings");
    if (chk[0] != -chk[1] || chk[2] != -chk[3])
        HX_FAIL(HX_ERR_MPI, "timer: the ranks met different phases (a helmix bug; timings not written)");
    /* per phase: seconds (min, max, sum), bytes (sum, max), transforms (sum, max); then the wall time */
    const int m = 7 * n + 3;
    buf = calloc((size_t)m, sizeof *buf);
    all = calloc((size_t)m, sizeof *all);
    HX_TRY(hx_error_agree(comm, buf && all ? HX_OK : hx_error_set(HX_ERR_MEM, "out of memory reducing the timings")));
    for (int i = 0; i < n; i++) {
        buf[i] = -t->ph[i].seconds; /* min as the max of the negation, so one MPI_MAX serves */
        buf[n + i] = t->ph[i].seconds;
        buf[3 * n + i] = t->ph[i].bytes;
        buf[5 * n + i] = (double)t->ph[i].transforms;
    }
    double wall = now - t->t0;
    buf[7 * n] = -wall, buf[7 * n + 1] = wall;
    HX_MPI(MPI_Reduce(buf, all, m, MPI_DOUBLE, MPI_MAX, 0, comm));
    /* sums: seconds, bytes, transforms and wall time, in the slots of buf the maxima left free */
    for (int i = 0; i < n; i++)
        buf[2 * n + i] = t->ph[i].seconds, buf[4 * n + i] = t->ph[i].bytes, buf[6 * n + i] = (double)t->ph[i].transforms;
    buf[7 * n + 2] = wall;
    if (rank == 0) {
        sums = calloc((size_t)m, sizeof *sums);
        smin = calloc((size_t)(n ? n : 1), sizeof *smin);
        rss_all = calloc((size_t)size, sizeof *rss_all);
        if (!sums || !smin || !rss_all) st = hx_error_set(HX_ERR_MEM, "out of memory reducing the timings");
    }
    HX_TRY(hx_error_agree(comm, st));
    HX_MPI(MPI_Reduce(buf, sums, m, MPI_DOUBLE, MPI_SUM, 0, comm));
    HX_MPI(MPI_Gather(&rss, 1, MPI_LONG_LONG, rss_all, 1, MPI_LONG_LONG, 0, comm));
    if (rank == 0) {
        for (int i = 0; i < n; i++) smin[i] = -all[i];
        reduced r = {size, smin, all + n, sums + 2 * n, sums + 4 * n, all + 3 * n, sums + 6 * n, all + 5 * n,
                     {-all[7 * n], sums[7 * n + 2], all[7 * n + 1]}, rss_all};
        text = render(t, &r);
        st = text ? write_file(path, text) : hx_error_set(HX_ERR_MEM, "out of memory rendering the timings");
    }
fail:
    free(buf);
    free(all);
    free(sums);
    free(smin);
    free(rss_all);
    free(text);
    return hx_error_agree(comm, st);
}
