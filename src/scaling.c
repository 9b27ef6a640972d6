/* scaling.c — a scaling study from timing files: read and check each document (the schema of
 * docs/timings.schema.json, by hand with cJSON), group the runs (strong: one command and
 * cells; weak: one command and about the same cells per core), pick each group's reference
 * (fewest cores) and compute speed-up and efficiency; then the Markdown table.
 * Invariant: every time is the slowest rank's (seconds.max), the time the run took. */
#include "helmix/scaling.h"

#include <cjson/cJSON.h>
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"

#define SCHEMA_NAME "helmix-timings"
#define SCHEMA_VERSION 1
/* Weak series: cells per core within this factor of the series' first run. Rounding N to an
 * even size moves C/P by a few per cent; a different base size moves it by a factor 2 or more. */
#define WEAK_SPREAD 1.5

/* ---- reading one file ------------------------------------------------------------------- */

static char *slurp(const char *path, hx_status *st)
{
    FILE *fp = fopen(path, "rb");
    char *buf = NULL;
    long len = -1;
    if (!fp) {
        *st = hx_error_set(HX_ERR_ARG, "%s: cannot read the file (%s)", path, strerror(errno));
        return NULL;
    }
    if (fseek(fp, 0, SEEK_END) == 0 && (len = ftell(fp)) >= 0 && fseek(fp, 0, SEEK_SET) == 0 &&
        (buf = malloc((size_t)len + 1)) && fread(buf, 1, (size_t)len, fp) == (size_t)len)
        buf[len] = '\0';
    else {
        free(buf);
        buf = NULL;
        *st = hx_error_set(HX_ERR_ARG, "%s: cannot read the file (a directory, or unreadable)", path);
    }
    fclose(fp);
    return buf;
}

/* A member that must be a number (>= lo), an integer when `integer`; one line when it is not. */
static hx_status number(const char *path, const cJSON *obj, const char *where, const char *key, double lo, int integer,
                        double *v)
{
    const cJSON *it = cJSON_GetObjectItemCaseSensitive(obj, key);
    if (!cJSON_IsNumber(it))
        return hx_error_set(HX_ERR_ARG, "%s: not a valid helmix timings file: %s%s\"%s\" %s", path, where, where[0] ? " " : "",
                            key, it ? "is not a number" : "is missing");
    *v = it->valuedouble;
    if (!isfinite(*v) || *v < lo || (integer && *v != floor(*v)))
        return hx_error_set(HX_ERR_ARG, "%s: not a valid helmix timings file: %s%s\"%s\" = %g must be %s >= %g", path, where,
                            where[0] ? " " : "", key, *v, integer ? "an integer" : "a number", lo);
    return HX_OK;
}

static hx_status spread_max(const char *path, const cJSON *obj, const char *where, const char *key, double *max)
{
    const cJSON *sp = cJSON_GetObjectItemCaseSensitive(obj, key);
    double mn, me;
    char w[160];
    snprintf(w, sizeof w, "%s%s\"%s\":", where, where[0] ? " " : "", key);
    if (!cJSON_IsObject(sp))
        return hx_error_set(HX_ERR_ARG, "%s: not a valid helmix timings file: %s%s\"%s\" is %s", path, where, where[0] ? " " : "",
                            key, sp ? "not an object {min, mean, max}" : "missing");
    hx_status st = number(path, sp, w, "min", 0, 0, &mn);
    if (st == HX_OK) st = number(path, sp, w, "mean", 0, 0, &me);
    if (st == HX_OK) st = number(path, sp, w, "max", 0, 0, max);
    if (st == HX_OK && !(mn <= me && me <= *max))
        st = hx_error_set(HX_ERR_ARG, "%s: not a valid helmix timings file: %s min <= mean <= max fails", path, w);
    return st;
}

/* Index of phase `name` in the study's list, appended when new; -1 when out of memory. */
static int phase_index(hx_scaling *s, const char *name)
{
    for (int i = 0; i < s->nphase; i++)
        if (!strcmp(s->phase[i], name)) return i;
    char(*grown)[HX_SCALING_NAME] = realloc(s->phase, (size_t)(s->nphase + 1) * sizeof *grown);
    if (!grown) return -1;
    s->phase = grown;
    snprintf(s->phase[s->nphase], HX_SCALING_NAME, "%s", name);
    return s->nphase++;
}

/* Check the document of `path` and fill run r; its phases go to r->phase by name as pairs
 * (index, seconds) in *pairs (count *np), mapped to the final list once every file is read. */
static hx_status read_run(hx_scaling *s, const char *path, hx_scaling_run *r, double **pairs, int *np)
{
    hx_status st = HX_OK;
    char *text = slurp(path, &st);
    cJSON *root = NULL;
    double v;
    if (!text) return st;
    root = cJSON_Parse(text);
    if (!root) {
        const char *at = cJSON_GetErrorPtr();
        long off = at && at >= text && at <= text + strlen(text) ? (long)(at - text) : -1;
        st = hx_error_set(HX_ERR_ARG, "%s: not JSON (a syntax error near byte %ld); expected a helmix timings file", path, off);
        goto done;
    }
    const cJSON *schema = cJSON_GetObjectItemCaseSensitive(root, "schema");
    if (!cJSON_IsObject(root) || !cJSON_IsString(schema) || strcmp(schema->valuestring, SCHEMA_NAME)) {
        st = hx_error_set(HX_ERR_ARG, "%s: not a helmix timings file (no \"schema\": \"%s\"; write one with --timings)", path,
                          SCHEMA_NAME);
        goto done;
    }
    if ((st = number(path, root, "", "schema_version", 1, 1, &v)) != HX_OK) goto done;
    if (v != SCHEMA_VERSION) {
        st = hx_error_set(HX_ERR_ARG, "%s: timings schema version %g; this helmix reads version %d", path, v, SCHEMA_VERSION);
        goto done;
    }
    snprintf(r->file, sizeof r->file, "%s", path);
    const cJSON *cmd = cJSON_GetObjectItemCaseSensitive(root, "command");
    if (!cJSON_IsString(cmd) || !cmd->valuestring[0]) {
        st = hx_error_set(HX_ERR_ARG, "%s: not a valid helmix timings file: \"command\" is %s", path,
                          cmd ? "not a non-empty text" : "missing");
        goto done;
    }
    snprintf(r->command, sizeof r->command, "%s", cmd->valuestring);
    if ((st = number(path, root, "", "ranks", 1, 1, &v)) != HX_OK) goto done;
    r->ranks = (int)v;
    if ((st = number(path, root, "", "threads", 1, 1, &v)) != HX_OK) goto done;
    r->threads = (int)v;
    r->cores = r->ranks * r->threads;
    const cJSON *grid = cJSON_GetObjectItemCaseSensitive(root, "grid");
    if (grid) {
        if (!cJSON_IsArray(grid) || cJSON_GetArraySize(grid) != 3) {
            st = hx_error_set(HX_ERR_ARG, "%s: not a valid helmix timings file: \"grid\" must hold three cell counts", path);
            goto done;
        }
        r->cells = 1;
        for (int a = 0; a < 3; a++) {
            const cJSON *g = cJSON_GetArrayItem(grid, a);
            if (!cJSON_IsNumber(g) || !(g->valuedouble >= 1) || g->valuedouble != floor(g->valuedouble)) {
                st = hx_error_set(HX_ERR_ARG, "%s: not a valid helmix timings file: \"grid\" must hold three cell counts", path);
                goto done;
            }
            r->grid[a] = (int64_t)g->valuedouble;
            r->cells *= g->valuedouble;
        }
    }
    const cJSON *notes = cJSON_GetObjectItemCaseSensitive(root, "notes"), *nc = cJSON_GetObjectItemCaseSensitive(notes, "cells");
    if (notes && !cJSON_IsObject(notes)) {
        st = hx_error_set(HX_ERR_ARG, "%s: not a valid helmix timings file: \"notes\" is not an object", path);
        goto done;
    }
    if (!grid && cJSON_IsNumber(nc) && nc->valuedouble >= 1) { /* no grid: the note "cells" (their number) */
        r->cells = nc->valuedouble;
        double side = round(cbrt(r->cells));
        if (side * side * side == r->cells) r->grid[0] = r->grid[1] = r->grid[2] = (int64_t)side;
    }
    if ((st = spread_max(path, root, "", "total_seconds", &r->total)) != HX_OK) goto done;
    const cJSON *rss = cJSON_GetObjectItemCaseSensitive(root, "peak_rss_bytes");
    if (!cJSON_IsObject(rss)) {
        st = hx_error_set(HX_ERR_ARG, "%s: not a valid helmix timings file: \"peak_rss_bytes\" is %s", path,
                          rss ? "not an object {per_rank, max}" : "missing");
        goto done;
    }
    if ((st = number(path, rss, "\"peak_rss_bytes\":", "max", 0, 0, &r->peak_rss)) != HX_OK) goto done;
    const cJSON *phases = cJSON_GetObjectItemCaseSensitive(root, "phases"), *p;
    if (!cJSON_IsArray(phases)) {
        st = hx_error_set(HX_ERR_ARG, "%s: not a valid helmix timings file: \"phases\" is %s", path,
                          phases ? "not an array" : "missing");
        goto done;
    }
    *np = 0;
    *pairs = malloc((size_t)(2 * cJSON_GetArraySize(phases) + 1) * sizeof **pairs);
    if (!*pairs) {
        st = hx_error_set(HX_ERR_MEM, "out of memory reading %s", path);
        goto done;
    }
    int i = 0;
    cJSON_ArrayForEach(p, phases)
    {
        char where[96];
        snprintf(where, sizeof where, "phase %d:", i++);
        const cJSON *name = cJSON_GetObjectItemCaseSensitive(p, "name");
        double sec;
        if (!cJSON_IsObject(p) || !cJSON_IsString(name) || !name->valuestring[0]) {
            st = hx_error_set(HX_ERR_ARG, "%s: not a valid helmix timings file: %s needs a \"name\"", path, where);
            goto done;
        }
        if ((st = spread_max(path, p, where, "seconds", &sec)) != HX_OK) goto done;
        int k = phase_index(s, name->valuestring);
        if (k < 0) {
            st = hx_error_set(HX_ERR_MEM, "out of memory reading %s", path);
            goto done;
        }
        (*pairs)[2 * *np] = k, (*pairs)[2 * *np + 1] = sec;
        ++*np;
    }
done:
    cJSON_Delete(root);
    free(text);
    return st;
}

/* ---- groups and efficiency -------------------------------------------------------------- */

static int by_command_cells_cores(const void *pa, const void *pb)
{
    const hx_scaling_run *a = pa, *b = pb;
    int c = strcmp(a->command, b->command);
    if (c) return c;
    if (a->cells != b->cells) return a->cells < b->cells ? -1 : 1;
    if (a->cores != b->cores) return a->cores - b->cores;
    return a->ranks - b->ranks;
}

static double per_core(const hx_scaling_run *r) { return r->cells / r->cores; }

static int by_command_density_cores(const void *pa, const void *pb)
{
    const hx_scaling_run *a = pa, *b = pb;
    int c = strcmp(a->command, b->command);
    if (c) return c;
    if (per_core(a) != per_core(b)) return per_core(a) < per_core(b) ? -1 : 1;
    return a->cores - b->cores;
}

static int by_command_group_cores(const void *pa, const void *pb)
{
    const hx_scaling_run *a = pa, *b = pb;
    int c = strcmp(a->command, b->command);
    if (c) return c;
    if (a->group != b->group) return a->group - b->group;
    if (a->cores != b->cores) return a->cores - b->cores;
    return a->ranks - b->ranks;
}

/* auto: strong when one command and cells were timed on two or more core counts. */
static hx_scaling_kind resolve(const hx_scaling *s)
{
    for (int i = 0; i < s->n; i++)
        for (int j = i + 1; j < s->n; j++)
            if (!strcmp(s->runs[i].command, s->runs[j].command) && s->runs[i].cells == s->runs[j].cells &&
                s->runs[i].cores != s->runs[j].cores)
                return HX_SCALING_STRONG;
    return HX_SCALING_WEAK;
}

static void group_runs(hx_scaling *s)
{
    s->ngroup = 0;
    if (s->kind == HX_SCALING_STRONG) {
        qsort(s->runs, (size_t)s->n, sizeof *s->runs, by_command_cells_cores);
        for (int i = 0; i < s->n; i++) {
            const hx_scaling_run *p = i ? &s->runs[i - 1] : NULL;
            if (!p || strcmp(p->command, s->runs[i].command) || p->cells != s->runs[i].cells) s->ngroup++;
            s->runs[i].group = s->ngroup - 1;
        }
    } else {
        qsort(s->runs, (size_t)s->n, sizeof *s->runs, by_command_density_cores);
        double first = 0;
        for (int i = 0; i < s->n; i++) {
            const hx_scaling_run *p = i ? &s->runs[i - 1] : NULL;
            if (!p || strcmp(p->command, s->runs[i].command) || per_core(&s->runs[i]) > WEAK_SPREAD * first) {
                s->ngroup++;
                first = per_core(&s->runs[i]);
            }
            s->runs[i].group = s->ngroup - 1;
        }
    }
    qsort(s->runs, (size_t)s->n, sizeof *s->runs, by_command_group_cores);
    for (int i = 0; i < s->n; i++) {
        hx_scaling_run *r = &s->runs[i];
        int ref = i;
        while (ref > 0 && s->runs[ref - 1].group == r->group) ref--; /* sorted: the first of its group */
        const hx_scaling_run *q = &s->runs[ref];
        r->ref = ref;
        r->speedup = r->total > 0 ? q->total / r->total : NAN;
        if (s->kind == HX_SCALING_STRONG) r->efficiency = r->total > 0 ? q->total * q->cores / (r->total * r->cores) : NAN;
        else r->efficiency = r->total > 0 && q->cores > 0 ? (q->total / per_core(q)) / (r->total / per_core(r)) : NAN;
        if (s->kind == HX_SCALING_WEAK) r->speedup = r->efficiency * r->cores / q->cores; /* work rate relative to the reference */
    }
}

hx_status hx_scaling_load(hx_scaling *s, const char *const *files, int nfiles, hx_scaling_kind kind)
{
    hx_status st = HX_OK;
    double **pairs = NULL;
    int *np = NULL;
    memset(s, 0, sizeof *s);
    if (nfiles < 1) return hx_error_set(HX_ERR_ARG, "no timing files given (helmix scaling FILE.json...; see --help)");
    HX_ALLOC(s->runs, nfiles);
    HX_ALLOC(pairs, nfiles);
    HX_ALLOC(np, nfiles);
    for (int i = 0; i < nfiles; i++) HX_TRY(read_run(s, files[i], &s->runs[i], &pairs[i], &np[i]));
    s->n = nfiles;
    for (int i = 0; i < nfiles; i++) {
        HX_ALLOC(s->runs[i].phase, s->nphase);
        for (int k = 0; k < s->nphase; k++) s->runs[i].phase[k] = NAN;
        for (int j = 0; j < np[i]; j++) {
            double *x = &s->runs[i].phase[(int)pairs[i][2 * j]];
            *x = isnan(*x) ? pairs[i][2 * j + 1] : *x + pairs[i][2 * j + 1]; /* a name given twice adds up */
        }
    }
    s->kind = kind == HX_SCALING_AUTO ? resolve(s) : kind;
    group_runs(s);
fail:
    for (int i = 0; pairs && i < nfiles; i++) free(pairs[i]);
    free(pairs);
    free(np);
    if (st != HX_OK) hx_scaling_clear(s);
    return st;
}

void hx_scaling_clear(hx_scaling *s)
{
    if (!s) return;
    for (int i = 0; s->runs && i < s->n; i++) free(s->runs[i].phase);
    free(s->runs);
    free(s->phase);
    memset(s, 0, sizeof *s);
}

/* ---- the table -------------------------------------------------------------------------- */

static const char *cells_text(char *buf, size_t len, const hx_scaling_run *r)
{
    if (!(r->cells > 0)) snprintf(buf, len, "–");
    else if (r->grid[0] == 0) snprintf(buf, len, "%.0f", r->cells);
    else if (r->grid[0] == r->grid[1] && r->grid[1] == r->grid[2]) snprintf(buf, len, "%lld³", (long long)r->grid[0]);
    else snprintf(buf, len, "%lld×%lld×%lld", (long long)r->grid[0], (long long)r->grid[1], (long long)r->grid[2]);
    return buf;
}

void hx_scaling_table(FILE *out, const hx_scaling *s)
{
    const int strong = s->kind == HX_SCALING_STRONG;
    for (int i0 = 0; i0 < s->n;) {
        const char *cmd = s->runs[i0].command;
        int i1 = i0;
        while (i1 < s->n && !strcmp(s->runs[i1].command, cmd)) i1++;
        char *used = calloc((size_t)(s->nphase ? s->nphase : 1), 1); /* the phases this command's runs have */
        for (int i = i0; i < i1; i++)
            for (int k = 0; used && k < s->nphase; k++) used[k] |= !isnan(s->runs[i].phase[k]);
        fprintf(out, "%s## helmix %s: %s scaling\n\n", i0 ? "\n" : "", cmd, strong ? "strong" : "weak");
        fprintf(out, "| cells | ranks | threads | cores | total [s] |");
        for (int k = 0; k < s->nphase; k++)
            if (!used || used[k]) fprintf(out, " %s [s] |", s->phase[k]);
        fprintf(out, " peak RSS [MiB] | speed-up | efficiency |\n");
        fprintf(out, "|---:|---:|---:|---:|---:|");
        for (int k = 0; k < s->nphase; k++)
            if (!used || used[k]) fprintf(out, "---:|");
        fprintf(out, "---:|---:|---:|\n");
        for (int i = i0; i < i1; i++) {
            const hx_scaling_run *r = &s->runs[i];
            char c[64];
            fprintf(out, "| %s | %d | %d | %d | %.4g |", cells_text(c, sizeof c, r), r->ranks, r->threads, r->cores, r->total);
            for (int k = 0; k < s->nphase; k++) {
                if (used && !used[k]) continue;
                if (isnan(r->phase[k])) fprintf(out, " – |");
                else fprintf(out, " %.4g |", r->phase[k]);
            }
            fprintf(out, " %.1f | %.2f | %.2f |\n", r->peak_rss / 1048576.0, r->speedup, r->efficiency);
        }
        free(used);
        i0 = i1;
    }
    if (strong)
        fprintf(out, "\nStrong scaling: cores P = ranks × threads; T is the slowest rank's wall time. Against the run with "
                     "the fewest cores P1 of the same cells (time T1): speed-up T1/T, efficiency T1·P1/(T·P).\n");
    else
        fprintf(out, "\nWeak scaling: cores P = ranks × threads; T is the slowest rank's wall time; C cells. Against the run "
                     "with the fewest cores of the series (C1, P1, T1): efficiency (T1·P1/C1)/(T·P/C) (T1/T at equal cells "
                     "per core), speed-up = efficiency × P/P1 (work done per second relative to the reference).\n");
}

hx_status hx_scaling_table_write(const char *path, const hx_scaling *s)
{
    FILE *fp = fopen(path, "w");
    if (!fp) return hx_error_set(HX_ERR_IO, "cannot write the table %s: %s", path, strerror(errno));
    hx_scaling_table(fp, s);
    return fclose(fp) == 0 ? HX_OK : hx_error_set(HX_ERR_IO, "cannot finish writing the table %s", path);
}
