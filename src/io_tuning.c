/* io_tuning.c — [output] alignment and io_hints: checked as text, turned into HDF5's
 * alignment of large objects and an MPI_Info of MPI-IO hints for the file open.
 * Invariant: a text that fails the check never reaches MPI or HDF5, and the check needs
 * neither, so validation can run it before anything is created. */
#include "io_tuning.h"

#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "check.h"

#define KEY_HINTS "[output] io_hints"
#define KEY_ALIGNMENT "[output] alignment"
/* 1 TiB: far above any file system's stripe or block, and still exact in a double */
#define ALIGNMENT_MAX 1099511627776.0

static int no_hints(const char *h)
{
    if (!h) return 1;
    while (isspace((unsigned char)*h)) h++;
    if (!*h) return 1;
    size_t n = strlen(h);
    while (n > 0 && isspace((unsigned char)h[n - 1])) n--;
    return n == 4 && !strncmp(h, "none", 4);
}

static int key_char(int c) { return isalnum(c) || c == '_' || c == '-' || c == '.'; }
static int value_char(int c) { return isgraph(c) && c != ',' && c != '='; }

/* The span [b, e) without surrounding blanks. */
static void trim(const char **b, const char **e)
{
    while (*b < *e && isspace((unsigned char)**b)) (*b)++;
    while (*e > *b && isspace((unsigned char)(*e)[-1])) (*e)--;
}

/* Walk "key=value,key=value": check every item and, when out is not NULL, write the canonical
 * text (blanks around items, keys and values dropped). Not collective, touches no MPI. */
static hx_status parse_hints(const char *text, char *out, size_t outlen)
{
    hx_status st = HX_OK;
    char seen[64][MPI_MAX_INFO_KEY + 1];
    int nseen = 0;
    size_t used = 0;
    const char *p = text;
    for (int item = 1;; item++) {
        const char *end = strchr(p, ','), *b = p, *e = end ? end : p + strlen(p);
        trim(&b, &e);
        const char *eq = memchr(b, '=', (size_t)(e - b));
        if (b == e)
            HX_FAIL(HX_ERR_ARG, KEY_HINTS " = %s: item %d is empty: write key=value,key=value (e.g. "
                    "cb_nodes=1,romio_cb_write=enable) or none", text, item);
        if (!eq)
            HX_FAIL(HX_ERR_ARG, KEY_HINTS " = %s: item %d '%.*s' has no '=': write key=value,key=value (e.g. "
                    "cb_nodes=1,romio_cb_write=enable) or none", text, item, (int)(e - b), b);
        const char *kb = b, *ke = eq, *vb = eq + 1, *ve = e;
        trim(&kb, &ke);
        trim(&vb, &ve);
        int klen = (int)(ke - kb), vlen = (int)(ve - vb);
        if (klen == 0 || vlen == 0)
            HX_FAIL(HX_ERR_ARG, KEY_HINTS " = %s: item %d '%.*s' needs both a key and a value", text, item,
                    (int)(e - b), b);
        for (const char *c = kb; c < ke; c++)
            if (!key_char((unsigned char)*c))
                HX_FAIL(HX_ERR_ARG, KEY_HINTS " = %s: hint name '%.*s' may hold only letters, digits, '_', '-' "
                        "and '.'", text, klen, kb);
        for (const char *c = vb; c < ve; c++)
            if (!value_char((unsigned char)*c))
                HX_FAIL(HX_ERR_ARG, KEY_HINTS " = %s: the value of '%.*s' holds '%c': values are printable, "
                        "without blanks, ',' or '='", text, klen, kb, *c);
        if (klen > MPI_MAX_INFO_KEY || vlen > MPI_MAX_INFO_VAL)
            HX_FAIL(HX_ERR_ARG, KEY_HINTS " = %s: hint '%.*s' is too long for MPI (names up to %d, values up to "
                    "%d characters)", text, klen, kb, MPI_MAX_INFO_KEY, MPI_MAX_INFO_VAL);
        for (int i = 0; i < nseen; i++)
            if ((int)strlen(seen[i]) == klen && !strncmp(seen[i], kb, (size_t)klen))
                HX_FAIL(HX_ERR_ARG, KEY_HINTS " = %s: hint '%.*s' is given twice", text, klen, kb);
        if (nseen == (int)(sizeof seen / sizeof seen[0]))
            HX_FAIL(HX_ERR_ARG, KEY_HINTS " = %s: more than %d hints", text, (int)(sizeof seen / sizeof seen[0]));
        snprintf(seen[nseen++], sizeof seen[0], "%.*s", klen, kb);
        if (out) {
            int n = snprintf(out + used, outlen - used, "%s%.*s=%.*s", used ? "," : "", klen, kb, vlen, vb);
            if (n < 0 || (size_t)n >= outlen - used) HX_FAIL(HX_ERR_ARG, KEY_HINTS ": the hints are too long");
            used += (size_t)n;
        }
        if (!end) break;
        p = end + 1;
    }
fail:
    return st;
}

hx_status hx_io_tuning_check(const hx_io_tuning *t)
{
    hx_status st = HX_OK;
    if (!t) return HX_OK;
    double a = t->alignment;
    if (!isfinite(a) || a < 0 || a > ALIGNMENT_MAX || a != floor(a))
        HX_FAIL(HX_ERR_ARG, KEY_ALIGNMENT " = %g: a whole number of bytes from 0 (HDF5's packing) to 2^40, e.g. "
                "1048576 for a 1 MiB file-system stripe", a);
    if (!no_hints(t->hints)) HX_TRY(parse_hints(t->hints, NULL, 0));
fail:
    return st;
}

hx_status io_tuning_init(io_tuning *t, const hx_io_tuning *in, hsize_t threshold)
{
    hx_status st = HX_OK;
    memset(t, 0, sizeof *t);
    snprintf(t->hints, sizeof t->hints, "none");
    HX_TRY(hx_io_tuning_check(in));
    if (!in) return HX_OK;
    t->alignment = (hsize_t)in->alignment;
    t->threshold = threshold > 0 ? threshold : 1;
    if (no_hints(in->hints)) return HX_OK;
    HX_TRY(parse_hints(in->hints, t->hints, sizeof t->hints));
    HX_MPI(MPI_Info_create(&t->info));
    t->has_info = 1;
    /* the canonical text is checked: split it again and hand each pair to MPI */
    char buf[HX_PATH_MAX];
    snprintf(buf, sizeof buf, "%s", t->hints);
    char *save = NULL;
    for (char *item = strtok_r(buf, ",", &save); item; item = strtok_r(NULL, ",", &save)) {
        char *eq = strchr(item, '=');
        *eq = '\0';
        HX_MPI(MPI_Info_set(t->info, item, eq + 1));
    }
    return HX_OK;
fail:
    io_tuning_free(t);
    return st;
}

hid_t io_tuning_fapl(const io_tuning *t, MPI_Comm comm)
{
    hx_status st = HX_OK;
    hid_t fapl = -1;
    HX_H5(fapl, H5Pcreate(H5P_FILE_ACCESS));
    HX_H5OK(H5Pset_fapl_mpio(fapl, comm, t->has_info ? t->info : MPI_INFO_NULL));
    if (t->alignment > 0) HX_H5OK(H5Pset_alignment(fapl, t->threshold, t->alignment));
    return fapl;
fail:
    (void)st;
    if (fapl >= 0) H5Pclose(fapl);
    return -1;
}

void io_tuning_free(io_tuning *t)
{
    if (t->has_info) MPI_Info_free(&t->info);
    t->has_info = 0;
}
