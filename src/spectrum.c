/* spectrum.c — E(k) shapes: power law, smooth band, log-log interpolated table.
 * Invariant: E(k) >= 0 everywhere and E(k) = 0 outside [kmin, kmax]. */
#include "helmix/spectrum.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "check.h"

struct hx_spectrum {
    hx_shape shape;
    double slope, kmin, kmax;
    int n;           /* table rows */
    double *lk, *le; /* log k, log E (-inf where E = 0) */
};

/* A regular file of at most HX_SPECTRUM_TABLE_MAX bytes, read whole; NULL with a reason. */
static char *slurp(const char *path, long *len, const char **why)
{
    int fd = open(path, O_RDONLY | O_NONBLOCK); /* a FIFO must not block the open */
    struct stat sb;
    FILE *fp = NULL;
    char *buf = NULL;
    *why = NULL;
    if (fd < 0) *why = strerror(errno);
    else if (fstat(fd, &sb) != 0) *why = strerror(errno);
    else if (!S_ISREG(sb.st_mode)) *why = "not a regular file";
    else if (sb.st_size > HX_SPECTRUM_TABLE_MAX) *why = "larger than a spectrum table may be";
    else if (!(fp = fdopen(fd, "rb")) || !(buf = malloc((size_t)sb.st_size + 1))) *why = "out of memory";
    else if (fread(buf, 1, (size_t)sb.st_size, fp) != (size_t)sb.st_size) *why = "read error";
    if (fp) fclose(fp);
    else if (fd >= 0) close(fd);
    if (*why) {
        free(buf);
        return NULL;
    }
    buf[sb.st_size] = '\0';
    *len = (long)sb.st_size;
    return buf;
}

hx_status hx_spectrum_parse_table(const char *text, const char *origin, double **k, double **e, int *n)
{
    return hx_spectrum_parse_table_n(text, text ? strlen(text) : 0, origin, k, e, n);
}

hx_status hx_spectrum_parse_table_n(const char *text, size_t size, const char *origin, double **k, double **e,
                                    int *n)
{
    hx_status st = HX_OK;
    int cap = 64, cnt = 0, line = 0;
    double *kk = NULL, *ee = NULL;
    const char *end = text + size;
    if (size > HX_SPECTRUM_TABLE_MAX)
        return hx_error_set(HX_ERR_ARG, "%s: %zu bytes: a spectrum table is a text of at most %d bytes", origin, size,
                            HX_SPECTRUM_TABLE_MAX);
    HX_TRY(hx_recipe_check_text(text, size, origin));
    HX_ALLOC(kk, cap);
    HX_ALLOC(ee, cap);
    for (const char *p = text; p && p < end;) {
        const char *eol = memchr(p, '\n', (size_t)(end - p));
        size_t len = eol ? (size_t)(eol - p) : (size_t)(end - p);
        char buf[512];
        line++;
        if (len >= sizeof buf) HX_FAIL(HX_ERR_ARG, "%s:%d: line too long", origin, line);
        memcpy(buf, p, len);
        buf[len] = '\0';
        char *hash = strchr(buf, '#');
        if (hash) *hash = '\0';
        char *s = buf, *end1, *end2;
        while (*s == ' ' || *s == '\t' || *s == '\r') s++;
        if (*s) {
            errno = 0;
            double kv = strtod(s, &end1);
            const char *sep = end1;
            while (*sep == ' ' || *sep == '\t' || *sep == ',') sep++;
            double ev = strtod(sep, &end2);
            while (*end2 == ' ' || *end2 == '\t' || *end2 == '\r' || *end2 == ',') end2++;
            if (end1 == s || end2 == sep || *end2 || errno)
                HX_FAIL(HX_ERR_ARG, "%s:%d: expected two numbers 'k E', got '%s'", origin, line, s);
            if (!(kv > 0) || !(ev >= 0) || !isfinite(kv) || !isfinite(ev))
                HX_FAIL(HX_ERR_ARG, "%s:%d: need k > 0 and E >= 0, got k = %g, E = %g", origin, line, kv, ev);
            if (cnt && kv <= kk[cnt - 1])
                HX_FAIL(HX_ERR_ARG, "%s:%d: k must increase strictly (%g after %g)", origin, line, kv, kk[cnt - 1]);
            if (cnt == cap) {
                cap *= 2;
                double *nk = realloc(kk, (size_t)cap * sizeof *kk), *ne = nk ? realloc(ee, (size_t)cap * sizeof *ee) : NULL;
                if (nk) kk = nk;
                if (ne) ee = ne;
                if (!nk || !ne) HX_FAIL(HX_ERR_MEM, "out of memory reading %s", origin);
            }
            kk[cnt] = kv;
            ee[cnt] = ev;
            cnt++;
        }
        p = eol ? eol + 1 : NULL;
    }
    if (cnt < 2) HX_FAIL(HX_ERR_ARG, "%s: a spectrum table needs at least two rows 'k E', found %d", origin, cnt);
    *k = kk;
    *e = ee;
    *n = cnt;
    return HX_OK;
fail:
    free(kk);
    free(ee);
    return st;
}

static hx_status load_table(hx_spectrum *sp, const char *path, MPI_Comm comm)
{
    hx_status st = HX_OK;
    int rank = 0;
    long len = -1;
    char *text = NULL;
    double *k = NULL, *e = NULL;
    HX_MPI(MPI_Comm_rank(comm, &rank));
    const char *why = NULL;
    if (rank == 0) {
        text = slurp(path, &len, &why);
        if (!text) len = -1;
    }
    HX_MPI(MPI_Bcast(&len, 1, MPI_LONG, 0, comm));
    if (len < 0) HX_FAIL(HX_ERR_ARG, "table = %s: cannot read the file%s%s", path, why ? ": " : "", why ? why : "");
    if (rank != 0) HX_ALLOC(text, len + 1);
    HX_MPI(MPI_Bcast(text, (int)len + 1, MPI_CHAR, 0, comm));
    HX_TRY(hx_spectrum_parse_table_n(text, (size_t)len, path, &k, &e, &sp->n));
    HX_ALLOC(sp->lk, sp->n);
    HX_ALLOC(sp->le, sp->n);
    for (int i = 0; i < sp->n; i++) {
        sp->lk[i] = log(k[i]);
        sp->le[i] = e[i] > 0 ? log(e[i]) : -INFINITY;
    }
fail:
    free(text);
    free(k);
    free(e);
    return st;
}

hx_status hx_spectrum_create(hx_spectrum **out, const hx_spectrum_spec *r, MPI_Comm comm)
{
    hx_status st = HX_OK;
    hx_spectrum *sp = NULL;
    HX_ALLOC(sp, 1);
    sp->shape = r->shape;
    sp->slope = r->slope;
    sp->kmin = r->kmin;
    sp->kmax = r->kmax;
    if (r->shape == HX_SHAPE_TABLE) HX_TRY(load_table(sp, r->table, comm));
    *out = sp;
    return HX_OK;
fail:
    hx_spectrum_destroy(&sp);
    return st;
}

static double table_energy(const hx_spectrum *sp, double k)
{
    double lk = log(k);
    if (lk < sp->lk[0] || lk > sp->lk[sp->n - 1]) return 0.0;
    int lo = 0, hi = sp->n - 1; /* bisection: lk[lo] <= lk <= lk[hi] */
    while (hi - lo > 1) {
        int mid = (lo + hi) / 2;
        if (sp->lk[mid] <= lk) lo = mid;
        else hi = mid;
    }
    if (isinf(sp->le[lo]) || isinf(sp->le[hi])) return 0.0; /* a zero at either end: no power */
    double t = (lk - sp->lk[lo]) / (sp->lk[hi] - sp->lk[lo]);
    return exp(sp->le[lo] + t * (sp->le[hi] - sp->le[lo]));
}

double hx_spectrum_energy(const hx_spectrum *sp, double k)
{
    if (!(k >= sp->kmin && k <= sp->kmax) || k <= 0) return 0.0;
    switch (sp->shape) {
    case HX_SHAPE_POWER: return pow(k, -sp->slope);
    case HX_SHAPE_BAND: return (k - sp->kmin) * (sp->kmax - k);
    case HX_SHAPE_TABLE: return table_energy(sp, k);
    }
    return 0.0;
}

double hx_spectrum_mode_power(const hx_spectrum *sp, double k)
{
    if (!(k >= sp->kmin && k <= sp->kmax) || k <= 0) return 0.0;
    if (sp->shape == HX_SHAPE_POWER) return pow(k, -sp->slope - 2.0);
    return hx_spectrum_energy(sp, k) / (k * k);
}

void hx_spectrum_destroy(hx_spectrum **sp)
{
    if (!sp || !*sp) return;
    free((*sp)->lk);
    free((*sp)->le);
    free(*sp);
    *sp = NULL;
}
