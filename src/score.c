/* score.c — `helmix score`: another tool's answers graded against a helmix suite manifest.
 * Both documents are parsed in full (cJSON) before anything is graded, so bad input is refused
 * with one line and nothing printed. Serial: parts are read with plain HDF5 calls (default
 * file driver, no MPI-IO) in blocks of planes, so memory stays small whatever the cube's size. */
#include "helmix/score.h"

#include <cjson/cJSON.h>
#include <hdf5.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "check.h"
#include "helmix/recipe.h"
#include "helmix/version.h"

#define REF_LEN 1024
enum { BLOCK = 1 << 20 }; /* values per read of a part dataset */

static const char *const KNOWN_CATEGORIES[] = {"pure", "mix", "analytic", "bulk", "layout", "noise", "ladder", "density"};
enum { NKNOWN = sizeof KNOWN_CATEGORIES / sizeof KNOWN_CATEGORIES[0] };

/* ---- what the documents hold ------------------------------------------------------------ */

typedef struct shells_in { int n; double *k, *comp, *sol; } shells_in;

typedef struct answer { double share; shells_in sh; } answer;

typedef struct variant { char name[HX_SCORE_NAME]; double remove_scale; answer a; } variant;

/* One component of a part: a dataset in an HDF5 file, or zero everywhere. */
typedef struct partref { int zero; char file[HX_PATH_MAX]; char dset[REF_LEN]; } partref;

typedef struct mcube {
    char name[HX_SCORE_NAME], category[HX_SCORE_CATEGORY], weighting[16];
    char file[HX_PATH_MAX];
    int has_parts;
    partref parts[2][3]; /* [solenoidal, compressive][x, y, z] */
    double tol_share, tol_shells, tol_parts; /* NAN: not given */
    int ladder, level;
    double cells;
    char group[HX_SCORE_CATEGORY];
    answer main;
    int nvar;
    variant *var;
} mcube;

typedef struct manifest {
    char suite[128], version[48];
    int suite_version, n;
    mcube *c;
} manifest;

typedef struct result {
    int from_inspect, mass_weighted;
    double share;
    int has_shells;
    shells_in sh;
    int has_parts;
    partref parts[2][3];
    const answer *a;   /* the answer graded against: the main one or a variant's */
    const char *variant;
} result;

/* Where a message points: "<doc> <path>: cube '<cube>': <key>: ...". */
typedef struct where { const char *doc, *path, *cube; } where;

static const char *PART_NAME[2] = {"solenoidal", "compressive"};

/* ---- messages and JSON access ----------------------------------------------------------- */

static hx_status bad(const where *w, const char *key, const char *fmt, ...) __attribute__((format(printf, 3, 4)));

static hx_status bad(const where *w, const char *key, const char *fmt, ...)
{
    char what[512], head[768];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(what, sizeof what, fmt, ap);
    va_end(ap);
    int n = snprintf(head, sizeof head, "%s %s", w->doc, w->path);
    if (w->cube && n >= 0 && (size_t)n < sizeof head) n += snprintf(head + n, sizeof head - (size_t)n, ": cube '%s'", w->cube);
    if (key && n >= 0 && (size_t)n < sizeof head) snprintf(head + n, sizeof head - (size_t)n, ": %s", key);
    return hx_error_set(HX_ERR_ARG, "%s: %s", head, what);
}

/* What a JSON value is, for "must be a number, not <kind>". */
static const char *kind(const cJSON *v)
{
    if (!v) return "missing";
    if (cJSON_IsNumber(v)) return "a number";
    if (cJSON_IsString(v)) return "a string";
    if (cJSON_IsBool(v)) return "true/false";
    if (cJSON_IsNull(v)) return "null";
    if (cJSON_IsArray(v)) return "an array";
    return "an object";
}

/* A finite number at key of o (required: missing is an error; else *v = NAN when absent). */
static hx_status number(const where *w, const cJSON *o, const char *key, const char *label, int required, double *v)
{
    const cJSON *x = cJSON_GetObjectItemCaseSensitive(o, key);
    *v = NAN;
    if (!x && !required) return HX_OK;
    if (!x) return bad(w, label, "missing (a number is required)");
    if (!cJSON_IsNumber(x)) return bad(w, label, "must be a number, not %s", kind(x));
    if (!isfinite(x->valuedouble)) return bad(w, label, "must be a finite number");
    *v = x->valuedouble;
    return HX_OK;
}

/* A number or null at key (null and absent give NAN). */
static hx_status number_or_null(const where *w, const cJSON *o, const char *key, const char *label, double *v)
{
    const cJSON *x = cJSON_GetObjectItemCaseSensitive(o, key);
    *v = NAN;
    if (!x || cJSON_IsNull(x)) return HX_OK;
    return number(w, o, key, label, 1, v);
}

static hx_status string(const where *w, const cJSON *o, const char *key, const char *label, char *dst, size_t len)
{
    const cJSON *x = cJSON_GetObjectItemCaseSensitive(o, key);
    if (!x) return bad(w, label, "missing (a string is required)");
    if (!cJSON_IsString(x)) return bad(w, label, "must be a string, not %s", kind(x));
    if (!x->valuestring[0] || strlen(x->valuestring) >= len)
        return bad(w, label, "must be a non-empty string of fewer than %zu bytes", len);
    snprintf(dst, len, "%s", x->valuestring);
    return HX_OK;
}

static cJSON *parse(const char *text, const char *doc, const char *path, hx_status *st)
{
    const char *end = NULL;
    cJSON *root = cJSON_ParseWithOpts(text ? text : "", &end, 1);
    *st = HX_OK;
    if (!root) {
        long off = end && text ? (long)(end - text) : 0;
        long line = 1;
        for (long i = 0; text && i < off; i++) line += text[i] == '\n';
        *st = hx_error_set(HX_ERR_ARG, "%s %s: not valid JSON (near line %ld)", doc, path, line);
    } else if (!cJSON_IsObject(root)) {
        *st = hx_error_set(HX_ERR_ARG, "%s %s: must be a JSON object, not %s", doc, path, kind(root));
        cJSON_Delete(root);
        root = NULL;
    }
    return root;
}

/* The directory of path ("." for a bare name) and dir/name for a relative name. */
static void directory(const char *path, char *dir, size_t len)
{
    const char *slash = strrchr(path, '/');
    if (!slash) snprintf(dir, len, ".");
    else if (slash == path) snprintf(dir, len, "/");
    else snprintf(dir, len, "%.*s", (int)(slash - path), path);
}

static int join(char *dst, size_t len, const char *dir, const char *name)
{
    int n = name[0] == '/' ? snprintf(dst, len, "%s", name) : snprintf(dst, len, "%s/%s", dir, name);
    return n >= 0 && (size_t)n < len;
}

/* ---- shells ----------------------------------------------------------------------------- */

static void shells_free(shells_in *s)
{
    free(s->k), free(s->comp), free(s->sol);
    memset(s, 0, sizeof *s);
}

static hx_status shells_alloc(shells_in *s, int n)
{
    s->n = n;
    s->k = calloc((size_t)(n > 0 ? n : 1), sizeof(double));
    s->comp = calloc((size_t)(n > 0 ? n : 1), sizeof(double));
    s->sol = calloc((size_t)(n > 0 ? n : 1), sizeof(double));
    if (!s->k || !s->comp || !s->sol) {
        shells_free(s);
        return hx_error_set(HX_ERR_MEM, "out of memory reading %d shells", n);
    }
    return HX_OK;
}

/* [{"k": s, "e_comp": .., "e_sol": ..}, ...] under `label` (the manifest's and RESULTS'). */
static hx_status shells_list(const where *w, const cJSON *arr, const char *label, shells_in *s)
{
    char key[160];
    if (!cJSON_IsArray(arr)) return bad(w, label, "must be an array of {\"k\", \"e_comp\", \"e_sol\"}, not %s", kind(arr));
    hx_status st = shells_alloc(s, cJSON_GetArraySize(arr));
    int i = 0;
    for (const cJSON *e = arr ? arr->child : NULL; st == HX_OK && e; e = e->next, i++) {
        snprintf(key, sizeof key, "%s[%d]", label, i);
        if (!cJSON_IsObject(e)) st = bad(w, key, "must be an object {\"k\", \"e_comp\", \"e_sol\"}, not %s", kind(e));
        if (st == HX_OK) snprintf(key, sizeof key, "%s[%d].k", label, i), st = number(w, e, "k", key, 1, &s->k[i]);
        if (st == HX_OK) snprintf(key, sizeof key, "%s[%d].e_comp", label, i), st = number(w, e, "e_comp", key, 1, &s->comp[i]);
        if (st == HX_OK) snprintf(key, sizeof key, "%s[%d].e_sol", label, i), st = number(w, e, "e_sol", key, 1, &s->sol[i]);
    }
    if (st != HX_OK) shells_free(s);
    return st;
}

/* One array of numbers of `helmix inspect --json`'s shells object. */
static hx_status number_array(const where *w, const cJSON *o, const char *key, const char *label, int n, double *dst)
{
    const cJSON *a = cJSON_GetObjectItemCaseSensitive(o, key);
    if (!cJSON_IsArray(a)) return bad(w, label, "must be an array of numbers, not %s", kind(a));
    if (cJSON_GetArraySize(a) != n) return bad(w, label, "has %d values; shells.k has %d", cJSON_GetArraySize(a), n);
    int i = 0;
    for (const cJSON *e = a->child; e; e = e->next, i++) {
        if (!cJSON_IsNumber(e) || !isfinite(e->valuedouble))
            return bad(w, label, "value %d must be a finite number, not %s", i, kind(e));
        dst[i] = e->valuedouble;
    }
    return HX_OK;
}

static hx_status shells_inspect(const where *w, const cJSON *o, shells_in *s)
{
    if (!cJSON_IsObject(o)) return bad(w, "shells", "must be an object of arrays (k, compressive, solenoidal), not %s", kind(o));
    const cJSON *k = cJSON_GetObjectItemCaseSensitive(o, "k");
    if (!cJSON_IsArray(k)) return bad(w, "shells.k", "must be an array of numbers, not %s", kind(k));
    hx_status st = shells_alloc(s, cJSON_GetArraySize(k));
    if (st == HX_OK) st = number_array(w, o, "k", "shells.k", s->n, s->k);
    if (st == HX_OK) st = number_array(w, o, "compressive", "shells.compressive", s->n, s->comp);
    if (st == HX_OK) st = number_array(w, o, "solenoidal", "shells.solenoidal", s->n, s->sol);
    if (st != HX_OK) shells_free(s);
    return st;
}

/* ---- parts ------------------------------------------------------------------------------ */

/* "zero" or three dataset references. In the manifest a reference is a dataset path in the
 * cube's file; in RESULTS it is "file.h5:/dataset" with the file relative to RESULTS. */
static hx_status part_refs(const where *w, const cJSON *v, const char *label, const char *file, const char *dir,
                           partref ref[3])
{
    char key[160];
    if (cJSON_IsString(v) && !strcmp(v->valuestring, "zero")) {
        for (int c = 0; c < 3; c++) ref[c].zero = 1;
        return HX_OK;
    }
    if (!cJSON_IsArray(v) || cJSON_GetArraySize(v) != 3)
        return bad(w, label, "must be \"zero\" or an array of 3 %s, not %s", file ? "dataset paths" : "\"file.h5:/dataset\" strings",
                   cJSON_IsArray(v) ? "an array of another length" : kind(v));
    int c = 0;
    for (const cJSON *e = v->child; e; e = e->next, c++) {
        snprintf(key, sizeof key, "%s[%d]", label, c);
        if (!cJSON_IsString(e)) return bad(w, key, "must be a string, not %s", kind(e));
        const char *s = e->valuestring, *sep = strstr(s, ":/");
        ref[c].zero = 0;
        if (file) { /* the manifest: a dataset of the cube file */
            if (s[0] != '/') return bad(w, key, "'%s' must be an absolute dataset path such as /parts/sol_x", s);
            snprintf(ref[c].file, sizeof ref[c].file, "%s", file);
            snprintf(ref[c].dset, sizeof ref[c].dset, "%s", s);
        } else {
            if (!sep || sep == s) return bad(w, key, "'%s' must read FILE.h5:/dataset", s);
            char name[HX_PATH_MAX];
            snprintf(name, sizeof name, "%.*s", (int)(sep - s), s);
            if (!join(ref[c].file, sizeof ref[c].file, dir, name)) return bad(w, key, "the file name is too long");
            snprintf(ref[c].dset, sizeof ref[c].dset, "%s", sep + 1);
        }
    }
    return HX_OK;
}

static hx_status parts_object(const where *w, const cJSON *o, const char *file, const char *dir, partref parts[2][3])
{
    char key[64];
    if (!cJSON_IsObject(o)) return bad(w, "parts", "must be an object {\"solenoidal\": ..., \"compressive\": ...}, not %s", kind(o));
    for (int p = 0; p < 2; p++) {
        snprintf(key, sizeof key, "parts.%s", PART_NAME[p]);
        const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, PART_NAME[p]);
        if (!v) return bad(w, key, "missing (three datasets or \"zero\")");
        hx_status st = part_refs(w, v, key, file, dir, parts[p]);
        if (st != HX_OK) return st;
    }
    return HX_OK;
}

/* ---- the manifest ----------------------------------------------------------------------- */

static void manifest_free(manifest *m)
{
    for (int i = 0; m->c && i < m->n; i++) {
        shells_free(&m->c[i].main.sh);
        for (int v = 0; v < m->c[i].nvar; v++) shells_free(&m->c[i].var[v].a.sh);
        free(m->c[i].var);
    }
    free(m->c);
    memset(m, 0, sizeof *m);
}

static hx_status answer_object(const where *w, const cJSON *o, const char *label, answer *a)
{
    char key[200];
    if (!cJSON_IsObject(o)) return bad(w, label, "must be an object, not %s", kind(o));
    snprintf(key, sizeof key, "%s.compressive_share", label);
    hx_status st = number(w, o, "compressive_share", key, 1, &a->share);
    if (st != HX_OK) return st;
    if (a->share < 0 || a->share > 1) return bad(w, key, "%g is not a share in [0, 1]", a->share);
    const cJSON *sh = cJSON_GetObjectItemCaseSensitive(o, "shells");
    snprintf(key, sizeof key, "%s.shells", label);
    return sh && !cJSON_IsNull(sh) ? shells_list(w, sh, key, &a->sh) : HX_OK;
}

static hx_status tolerance(const where *w, const cJSON *t, const char *key, int required, double *v)
{
    char label[64];
    snprintf(label, sizeof label, "tolerance.%s", key);
    hx_status st = required ? number(w, t, key, label, 1, v) : number_or_null(w, t, key, label, v);
    if (st == HX_OK && isfinite(*v) && *v < 0) return bad(w, label, "must be >= 0, not %g", *v);
    return st;
}

static hx_status variants(const where *w, const cJSON *o, mcube *c)
{
    char label[200];
    if (!o || cJSON_IsNull(o)) return HX_OK;
    if (!cJSON_IsObject(o)) return bad(w, "variants", "must be an object of named variants, not %s", kind(o));
    int n = cJSON_GetArraySize(o);
    c->var = calloc((size_t)(n > 0 ? n : 1), sizeof *c->var);
    if (!c->var) return hx_error_set(HX_ERR_MEM, "out of memory reading the variants of %s", c->name);
    for (const cJSON *v = o->child; v; v = v->next) {
        variant *x = &c->var[c->nvar++];
        snprintf(label, sizeof label, "variants.%s", v->string);
        if (strlen(v->string) >= sizeof x->name) return bad(w, label, "the name is too long");
        snprintf(x->name, sizeof x->name, "%s", v->string);
        if (!cJSON_IsObject(v)) return bad(w, label, "must be an object, not %s", kind(v));
        snprintf(label, sizeof label, "variants.%s.remove_scale", v->string);
        hx_status st = number_or_null(w, v, "remove_scale", label, &x->remove_scale);
        if (st != HX_OK) return st;
        snprintf(label, sizeof label, "variants.%s.answer", v->string);
        if ((st = answer_object(w, cJSON_GetObjectItemCaseSensitive(v, "answer"), label, &x->a)) != HX_OK) return st;
    }
    return HX_OK;
}

static hx_status manifest_cube(const cJSON *e, int i, const char *path, const char *dir, mcube *c)
{
    char key[64];
    where w = {"manifest", path, NULL};
    snprintf(key, sizeof key, "cubes[%d]", i);
    if (!cJSON_IsObject(e)) return bad(&w, key, "must be an object, not %s", kind(e));
    snprintf(key, sizeof key, "cubes[%d].name", i);
    hx_status st = string(&w, e, "name", key, c->name, sizeof c->name);
    if (st != HX_OK) return st;
    w.cube = c->name;
    if ((st = string(&w, e, "category", "category", c->category, sizeof c->category)) != HX_OK) return st;
    char file[HX_PATH_MAX];
    if ((st = string(&w, e, "file", "file", file, sizeof file)) != HX_OK) return st;
    if (!join(c->file, sizeof c->file, dir, file)) return bad(&w, "file", "the path is too long");
    const cJSON *wt = cJSON_GetObjectItemCaseSensitive(e, "weighting");
    snprintf(c->weighting, sizeof c->weighting, "%s", cJSON_IsString(wt) ? wt->valuestring : "volume");
    if ((st = answer_object(&w, cJSON_GetObjectItemCaseSensitive(e, "answer"), "answer", &c->main)) != HX_OK) return st;
    if ((st = variants(&w, cJSON_GetObjectItemCaseSensitive(e, "variants"), c)) != HX_OK) return st;
    const cJSON *parts = cJSON_GetObjectItemCaseSensitive(e, "parts");
    if (parts && !cJSON_IsNull(parts)) {
        if ((st = parts_object(&w, parts, c->file, dir, c->parts)) != HX_OK) return st;
        if (c->parts[0][0].zero && c->parts[1][0].zero) return bad(&w, "parts", "both parts are \"zero\": nothing to grade against");
        c->has_parts = 1;
    }
    const cJSON *lad = cJSON_GetObjectItemCaseSensitive(e, "ladder");
    if (lad && !cJSON_IsNull(lad)) {
        double level;
        if (!cJSON_IsObject(lad)) return bad(&w, "ladder", "must be an object or null, not %s", kind(lad));
        if ((st = string(&w, lad, "group", "ladder.group", c->group, sizeof c->group)) != HX_OK ||
            (st = number(&w, lad, "level", "ladder.level", 1, &level)) != HX_OK ||
            (st = number(&w, lad, "cells", "ladder.cells", 1, &c->cells)) != HX_OK)
            return st;
        if (!(c->cells > 0)) return bad(&w, "ladder.cells", "must be > 0");
        c->ladder = 1, c->level = (int)level;
    }
    const cJSON *t = cJSON_GetObjectItemCaseSensitive(e, "tolerance");
    if (!cJSON_IsObject(t)) return bad(&w, "tolerance", "must be an object, not %s", kind(t));
    if ((st = tolerance(&w, t, "compressive_share", 1, &c->tol_share)) != HX_OK ||
        (st = tolerance(&w, t, "shells_relative", 0, &c->tol_shells)) != HX_OK ||
        (st = tolerance(&w, t, "parts_rms_relative", c->has_parts, &c->tol_parts)) != HX_OK)
        return st;
    return HX_OK;
}

static hx_status manifest_read(const char *text, const char *path, manifest *m)
{
    hx_status st;
    char dir[HX_PATH_MAX];
    where w = {"manifest", path, NULL};
    cJSON *root = parse(text, "manifest", path, &st);
    if (!root) return st;
    directory(path, dir, sizeof dir);
    double version = NAN;
    const cJSON *cubes = cJSON_GetObjectItemCaseSensitive(root, "cubes");
    if ((st = number(&w, root, "suite_version", "suite_version", 1, &version)) != HX_OK) goto fail;
    if (version != HX_SCORE_SUITE_VERSION)
        HX_FAIL(HX_ERR_ARG, "manifest %s: suite_version %g: this helmix reads version %d only", path, version,
                HX_SCORE_SUITE_VERSION);
    m->suite_version = (int)version;
    const cJSON *s = cJSON_GetObjectItemCaseSensitive(root, "suite"), *hv = cJSON_GetObjectItemCaseSensitive(root, "helmix_version");
    snprintf(m->suite, sizeof m->suite, "%s", cJSON_IsString(s) ? s->valuestring : "");
    snprintf(m->version, sizeof m->version, "%s", cJSON_IsString(hv) ? hv->valuestring : "");
    if (!cJSON_IsArray(cubes) || cJSON_GetArraySize(cubes) == 0)
        HX_FAIL(HX_ERR_ARG, "manifest %s: cubes: must be a non-empty array of cubes, not %s", path,
                cJSON_IsArray(cubes) ? "an empty one" : kind(cubes));
    m->n = cJSON_GetArraySize(cubes);
    HX_ALLOC(m->c, m->n);
    int i = 0;
    for (const cJSON *e = cubes->child; e; e = e->next, i++) {
        HX_TRY(manifest_cube(e, i, path, dir, &m->c[i]));
        for (int j = 0; j < i; j++)
            if (!strcmp(m->c[j].name, m->c[i].name))
                HX_FAIL(HX_ERR_ARG, "manifest %s: cube '%s' is named twice (cubes[%d] and cubes[%d])", path, m->c[i].name, j, i);
    }
fail:
    cJSON_Delete(root);
    if (st != HX_OK) manifest_free(m);
    return st;
}

/* ---- RESULTS ---------------------------------------------------------------------------- */

static void results_free(result *r, int n)
{
    for (int i = 0; r && i < n; i++) shells_free(&r[i].sh);
    free(r);
}

static const variant *variant_named(const mcube *c, const char *name)
{
    for (int v = 0; v < c->nvar; v++)
        if (!strcmp(c->var[v].name, name)) return &c->var[v];
    return NULL;
}

/* The names of c's variants (or "none") for a message. */
static const char *variant_list(const mcube *c, int scales, char *buf, size_t len)
{
    size_t o = 0;
    buf[0] = '\0';
    for (int v = 0; v < c->nvar && o + 1 < len; v++) {
        int n = scales ? snprintf(buf + o, len - o, "%s%s remove_scale %g", v ? ", " : "", c->var[v].name, c->var[v].remove_scale)
                       : snprintf(buf + o, len - o, "%s%s", v ? ", " : "", c->var[v].name);
        if (n < 0) break;
        o += (size_t)n;
    }
    if (!c->nvar) snprintf(buf, len, "none");
    return buf;
}

/* A `helmix inspect --json` document as the answer of cube c. */
static hx_status result_inspect(const where *w, const cJSON *v, const mcube *c, result *r)
{
    char list[512];
    r->from_inspect = 1;
    const cJSON *e = cJSON_GetObjectItemCaseSensitive(v, "energy");
    if (!cJSON_IsObject(e)) return bad(w, "energy", "must be an object holding compressive_fraction, not %s", kind(e));
    hx_status st = number(w, e, "compressive_fraction", "energy.compressive_fraction", 1, &r->share);
    if (st != HX_OK) return st;
    const cJSON *sh = cJSON_GetObjectItemCaseSensitive(v, "shells");
    if (sh && !cJSON_IsNull(sh)) {
        if ((st = shells_inspect(w, sh, &r->sh)) != HX_OK) return st;
        r->has_shells = 1;
    }
    const cJSON *mw = cJSON_GetObjectItemCaseSensitive(v, "mass_weighted");
    r->mass_weighted = cJSON_IsTrue(mw);
    double scale = 0;
    if ((st = number_or_null(w, v, "remove_scale", "remove_scale", &scale)) != HX_OK) return st;
    r->a = &c->main;
    if (scale > 0) {
        for (int i = 0; i < c->nvar; i++)
            if (fabs(c->var[i].remove_scale - scale) <= 1e-9 * scale) r->a = &c->var[i].a, r->variant = c->var[i].name;
        if (!r->variant)
            return bad(w, "remove_scale", "%g selects no variant of the cube (variants: %s)", scale, variant_list(c, 1, list, sizeof list));
    }
    return HX_OK;
}

/* {"compressive_share": x, "shells": [...], "parts": {...}, "variant": "..."} for cube c. */
static hx_status result_values(const where *w, const cJSON *v, const mcube *c, const char *dir, result *r)
{
    char list[512];
    hx_status st = number(w, v, "compressive_share", "compressive_share", 1, &r->share);
    if (st != HX_OK) return st;
    const cJSON *sh = cJSON_GetObjectItemCaseSensitive(v, "shells");
    if (sh) {
        if ((st = shells_list(w, sh, "shells", &r->sh)) != HX_OK) return st;
        r->has_shells = 1;
    }
    const cJSON *parts = cJSON_GetObjectItemCaseSensitive(v, "parts");
    if (parts) {
        if ((st = parts_object(w, parts, NULL, dir, r->parts)) != HX_OK) return st;
        r->has_parts = 1;
    }
    const cJSON *var = cJSON_GetObjectItemCaseSensitive(v, "variant");
    r->a = &c->main;
    if (var && !cJSON_IsNull(var)) {
        if (!cJSON_IsString(var)) return bad(w, "variant", "must be the name of a variant, not %s", kind(var));
        const variant *x = variant_named(c, var->valuestring);
        if (!x) return bad(w, "variant", "'%s' is not a variant of the cube (variants: %s)", var->valuestring, variant_list(c, 0, list, sizeof list));
        r->a = &x->a, r->variant = x->name;
    }
    return HX_OK;
}

static const mcube *cube_named(const manifest *m, const char *name)
{
    for (int i = 0; i < m->n; i++)
        if (!strcmp(m->c[i].name, name)) return &m->c[i];
    return NULL;
}

/* Every key of RESULTS is a cube of the manifest, once; every cube has a well-formed value. */
static hx_status results_read(const char *text, const char *path, const manifest *m, result **out)
{
    hx_status st;
    char dir[HX_PATH_MAX];
    result *r = NULL;
    cJSON *root = parse(text, "results", path, &st);
    if (!root) return st;
    directory(path, dir, sizeof dir);
    for (const cJSON *e = root->child; e; e = e->next) {
        if (!cube_named(m, e->string)) {
            char names[256];
            size_t o = 0;
            for (int i = 0; i < m->n && o + 1 < sizeof names; i++) {
                int k = snprintf(names + o, sizeof names - o, "%s%s", i ? ", " : "", m->c[i].name);
                o = k < 0 ? sizeof names : o + (size_t)k;
            }
            if (o >= sizeof names - 1) snprintf(names + sizeof names - 5, 5, "...");
            HX_FAIL(HX_ERR_ARG, "results %s: cube '%s' is not in the manifest (its cubes: %s)", path, e->string, names);
        }
        for (const cJSON *f = root->child; f != e; f = f->next)
            if (!strcmp(f->string, e->string)) HX_FAIL(HX_ERR_ARG, "results %s: cube '%s' is given twice", path, e->string);
    }
    HX_ALLOC(r, m->n);
    for (int i = 0; i < m->n; i++) {
        const mcube *c = &m->c[i];
        where w = {"results", path, c->name};
        const cJSON *v = cJSON_GetObjectItemCaseSensitive(root, c->name);
        if (!v) HX_FAIL(HX_ERR_ARG, "results %s: cube '%s' is missing (every cube of the manifest needs an answer)", path, c->name);
        if (!cJSON_IsObject(v))
            HX_FAIL(HX_ERR_ARG, "results %s: cube '%s': must be an object holding compressive_share, not %s", path, c->name, kind(v));
        if (cJSON_GetObjectItemCaseSensitive(v, "helmix_version")) HX_TRY(result_inspect(&w, v, c, &r[i]));
        else HX_TRY(result_values(&w, v, c, dir, &r[i]));
    }
fail:
    cJSON_Delete(root);
    if (st != HX_OK) results_free(r, m->n), r = NULL;
    *out = r;
    return st;
}

/* ---- grading: share and shells ---------------------------------------------------------- */

static void case_shells_free(hx_score_shells *s)
{
    free(s->k), free(s->energy), free(s->ans_comp), free(s->ans_sol), free(s->got_comp), free(s->got_sol);
    free(s->err_comp), free(s->err_sol);
    memset(s, 0, sizeof *s);
}

static int same_k(double a, double b) { return fabs(a - b) <= 1e-6 * fmax(1.0, fabs(a)); }

/* The answer's shells above the floor against the tool's shell of the same k. */
static hx_status grade_shells(const where *w, const answer *a, const shells_in *got, double tol, hx_score_shells *g)
{
    hx_status st = HX_OK;
    double peak = 0;
    int n = 0;
    for (int i = 0; i < a->sh.n; i++) peak = fmax(peak, a->sh.comp[i] + a->sh.sol[i]);
    for (int i = 0; i < a->sh.n; i++) n += a->sh.comp[i] + a->sh.sol[i] > HX_SCORE_SHELL_FLOOR * peak;
    g->tolerance = tol;
    HX_ALLOC(g->k, n);
    HX_ALLOC(g->energy, n);
    HX_ALLOC(g->ans_comp, n);
    HX_ALLOC(g->ans_sol, n);
    HX_ALLOC(g->got_comp, n);
    HX_ALLOC(g->got_sol, n);
    HX_ALLOC(g->err_comp, n);
    HX_ALLOC(g->err_sol, n);
    for (int i = 0; i < a->sh.n; i++) {
        double e = a->sh.comp[i] + a->sh.sol[i];
        if (!(e > HX_SCORE_SHELL_FLOOR * peak)) continue;
        int j = 0;
        while (j < got->n && !same_k(got->k[j], a->sh.k[i])) j++;
        if (j == got->n) {
            st = bad(w, "shells", "no shell k = %g, where the answer holds %.3g of the energy", a->sh.k[i], e);
            goto fail;
        }
        int m = g->n++;
        g->k[m] = a->sh.k[i], g->energy[m] = e;
        g->ans_comp[m] = a->sh.comp[i], g->ans_sol[m] = a->sh.sol[i];
        g->got_comp[m] = got->comp[j], g->got_sol[m] = got->sol[j];
        g->err_comp[m] = (got->comp[j] - a->sh.comp[i]) / e;
        g->err_sol[m] = (got->sol[j] - a->sh.sol[i]) / e;
        double worst = fmax(fabs(g->err_comp[m]), fabs(g->err_sol[m]));
        if (m == 0 || worst > g->max_error) g->max_error = worst, g->max_k = g->k[m];
    }
    g->passed = g->max_error <= tol;
fail:
    if (st != HX_OK) case_shells_free(g);
    return st;
}

/* ---- grading: real-space parts ---------------------------------------------------------- */

typedef struct h5part { hid_t file, dset; double *buf; } h5part;

static void part_close(h5part *h)
{
    if (h->dset >= 0) H5Dclose(h->dset);
    if (h->file >= 0) H5Fclose(h->file);
    free(h->buf);
    h->file = h->dset = -1, h->buf = NULL;
}

/* Open one component of a part and check its shape: a 3-D floating-point dataset, of the
 * shape dims already holds when dims[0] > 0 (else dims takes this one's shape). */
static hx_status part_open(const where *w, const char *key, const partref *p, hsize_t dims[3], h5part *h)
{
    hx_status st = HX_OK;
    hid_t space = -1, type = -1;
    hsize_t d[3];
    h->file = h->dset = -1;
    if (p->zero) return HX_OK;
    if (access(p->file, R_OK) != 0) return bad(w, key, "cannot read the file %s", p->file);
    if (H5Fis_hdf5(p->file) <= 0) return bad(w, key, "%s is not an HDF5 file", p->file);
    if ((h->file = H5Fopen(p->file, H5F_ACC_RDONLY, H5P_DEFAULT)) < 0) return bad(w, key, "HDF5 cannot open %s", p->file);
    if (H5Lexists(h->file, p->dset, H5P_DEFAULT) <= 0 || (h->dset = H5Dopen2(h->file, p->dset, H5P_DEFAULT)) < 0) {
        st = bad(w, key, "%s has no dataset %s", p->file, p->dset);
        goto fail;
    }
    HX_H5(space, H5Dget_space(h->dset));
    HX_H5(type, H5Dget_type(h->dset));
    if (H5Tget_class(type) != H5T_FLOAT) {
        st = bad(w, key, "%s:%s does not hold floating-point numbers", p->file, p->dset);
        goto fail;
    }
    if (H5Sget_simple_extent_ndims(space) != 3) {
        st = bad(w, key, "%s:%s has %d dimensions, not 3", p->file, p->dset, H5Sget_simple_extent_ndims(space));
        goto fail;
    }
    HX_H5OK(H5Sget_simple_extent_dims(space, d, NULL));
    if (dims[0] == 0) memcpy(dims, d, sizeof d);
    else if (d[0] != dims[0] || d[1] != dims[1] || d[2] != dims[2]) {
        st = bad(w, key, "%s:%s has shape (%llu, %llu, %llu); the answer's is (%llu, %llu, %llu)", p->file, p->dset,
                 (unsigned long long)d[0], (unsigned long long)d[1], (unsigned long long)d[2], (unsigned long long)dims[0],
                 (unsigned long long)dims[1], (unsigned long long)dims[2]);
        goto fail;
    }
fail:
    if (type >= 0) H5Tclose(type);
    if (space >= 0) H5Sclose(space);
    if (st != HX_OK) part_close(h);
    return st;
}

/* Planes [i0, i0 + nb) of an open part into h->buf (zeros for a "zero" part). */
static hx_status part_read(h5part *h, const hsize_t dims[3], hsize_t i0, hsize_t nb)
{
    hx_status st = HX_OK;
    hid_t fs = -1, ms = -1;
    size_t count = (size_t)(nb * dims[1] * dims[2]);
    if (h->dset < 0) {
        memset(h->buf, 0, count * sizeof(double));
        return HX_OK;
    }
    hsize_t start[3] = {i0, 0, 0}, cnt[3] = {nb, dims[1], dims[2]};
    HX_H5(fs, H5Dget_space(h->dset));
    HX_H5OK(H5Sselect_hyperslab(fs, H5S_SELECT_SET, start, NULL, cnt, NULL));
    HX_H5(ms, H5Screate_simple(3, cnt, NULL));
    HX_H5OK(H5Dread(h->dset, H5T_NATIVE_DOUBLE, ms, fs, H5P_DEFAULT, h->buf));
fail:
    if (ms >= 0) H5Sclose(ms);
    if (fs >= 0) H5Sclose(fs);
    return st;
}

/* Sums over the cells of every component: the field the answer's parts add up to, each
 * answer part, each tool part and the differences. */
typedef struct part_sums { double field2, ans2[2], got2[2], diff2[2], cells; } part_sums;

/* One component c: answer and tool, solenoidal and compressive, in blocks of planes. */
static hx_status part_component(const mcube *m, const result *r, const where *wm, const where *wr, int c, part_sums *s)
{
    hx_status st = HX_OK;
    h5part h[4] = {{-1, -1, NULL}, {-1, -1, NULL}, {-1, -1, NULL}, {-1, -1, NULL}}; /* answer sol, comp; tool sol, comp */
    const partref *ref[4] = {&m->parts[0][c], &m->parts[1][c], &r->parts[0][c], &r->parts[1][c]};
    hsize_t dims[3] = {0, 0, 0};
    char key[64];
    for (int i = 0; i < 4; i++) { /* the answer's first, so the shape is the answer's */
        snprintf(key, sizeof key, "parts.%s[%d]", PART_NAME[i % 2], c);
        HX_TRY(part_open(i < 2 ? wm : wr, key, ref[i], dims, &h[i]));
    }
    if (dims[0] == 0) HX_FAIL(HX_ERR_ARG, "results %s: cube '%s': parts: every part is \"zero\"; the answer's shape is unknown", wr->path, wr->cube);
    hsize_t plane = dims[1] * dims[2], nb = plane >= BLOCK ? 1 : BLOCK / plane;
    for (int i = 0; i < 4; i++) HX_ALLOC(h[i].buf, (nb < dims[0] ? nb : dims[0]) * plane);
    for (hsize_t i0 = 0; i0 < dims[0]; i0 += nb) {
        hsize_t rows = dims[0] - i0 < nb ? dims[0] - i0 : nb;
        for (int i = 0; i < 4; i++) HX_TRY(part_read(&h[i], dims, i0, rows));
        for (size_t j = 0; j < (size_t)(rows * plane); j++) {
            double as = h[0].buf[j], ac = h[1].buf[j], gs = h[2].buf[j], gc = h[3].buf[j];
            s->field2 += (as + ac) * (as + ac);
            s->ans2[0] += as * as, s->ans2[1] += ac * ac;
            s->got2[0] += gs * gs, s->got2[1] += gc * gc;
            s->diff2[0] += (gs - as) * (gs - as), s->diff2[1] += (gc - ac) * (gc - ac);
        }
    }
    s->cells = (double)(dims[0] * plane);
fail:
    for (int i = 0; i < 4; i++) part_close(&h[i]);
    return st;
}

static hx_status grade_parts(const mcube *m, const result *r, const char *mpath, const char *rpath, hx_score_case *k)
{
    where wm = {"manifest", mpath, m->name}, wr = {"results", rpath, m->name};
    part_sums s = {0};
    for (int c = 0; c < 3; c++) {
        hx_status st = part_component(m, r, &wm, &wr, c, &s);
        if (st != HX_OK) return st;
    }
    if (!(s.field2 > 0)) return bad(&wm, "parts", "the answer's parts add up to a field that is zero everywhere");
    k->has_parts = 1;
    k->field_rms = sqrt(s.field2 / s.cells);
    k->parts_tolerance = m->tol_parts;
    for (int p = 0; p < 2; p++) {
        k->parts_error[p] = sqrt(s.diff2[p] / s.field2);
        k->parts_answer_rms[p] = sqrt(s.ans2[p] / s.cells);
        k->parts_measured_rms[p] = sqrt(s.got2[p] / s.cells);
        k->parts_passed[p] = k->parts_error[p] <= m->tol_parts;
    }
    return HX_OK;
}

/* ---- grading: one cube, the categories -------------------------------------------------- */

static void note(hx_score_case *k, const char *s)
{
    size_t n = strlen(k->note);
    snprintf(k->note + n, sizeof k->note - n, "%s%s", n ? "; " : "", s);
}

static hx_status grade_case(const mcube *m, const result *r, const char *mpath, const char *rpath, hx_score_case *k)
{
    where wr = {"results", rpath, m->name};
    snprintf(k->name, sizeof k->name, "%s", m->name);
    snprintf(k->category, sizeof k->category, "%s", m->category);
    snprintf(k->variant, sizeof k->variant, "%s", r->variant ? r->variant : "");
    k->from_inspect = r->from_inspect;
    k->answer = r->a->share, k->measured = r->share, k->error = r->share - r->a->share;
    k->tolerance = m->tol_share;
    k->share_passed = fabs(k->error) <= k->tolerance;
    k->ladder = m->ladder, k->ladder_level = m->level, k->ladder_cells = m->cells;
    snprintf(k->ladder_group, sizeof k->ladder_group, "%s", m->group);
    if (r->has_shells && r->a->sh.n > 0) {
        if (!isfinite(m->tol_shells)) note(k, "shells not graded: the manifest gives no tolerance.shells_relative");
        else {
            hx_status st = grade_shells(&wr, r->a, &r->sh, m->tol_shells, &k->shells);
            if (st != HX_OK) return st;
            k->has_shells = 1;
        }
    } else if (r->has_shells) note(k, "shells not graded: the answer lists none");
    if (r->has_parts && r->a != &m->main) note(k, "parts not graded: the manifest's parts belong to the main answer, not a variant");
    else if (r->has_parts && !m->has_parts) note(k, "parts not graded: the manifest holds none for this cube");
    else if (r->has_parts) {
        hx_status st = grade_parts(m, r, mpath, rpath, k);
        if (st != HX_OK) return st;
    }
    if (r->from_inspect && r->mass_weighted != !strcmp(m->weighting, "mass"))
        note(k, r->mass_weighted ? "inspect analysed sqrt(rho) v; the answer is of v (volume weighting)"
                                 : "inspect analysed v; the answer is of sqrt(rho) v (give inspect --density)");
    k->passed = k->share_passed && (!k->has_shells || k->shells.passed) &&
                (!k->has_parts || (k->parts_passed[0] && k->parts_passed[1]));
    return HX_OK;
}

static int category_slot(hx_scorecard *sc, const char *name)
{
    for (int i = 0; i < sc->ncat; i++)
        if (!strcmp(sc->cat[i].name, name)) return i;
    if (sc->ncat == HX_SCORE_MAX_CATEGORIES) return -1;
    snprintf(sc->cat[sc->ncat].name, sizeof sc->cat[0].name, "%s", name);
    return sc->ncat++;
}

static void categories(hx_scorecard *sc)
{
    for (int i = 0; i < NKNOWN; i++) /* the known ones first, in the contract's order */
        for (int j = 0; j < sc->n; j++)
            if (!strcmp(sc->cases[j].category, KNOWN_CATEGORIES[i])) {
                category_slot(sc, KNOWN_CATEGORIES[i]);
                break;
            }
    for (int j = 0; j < sc->n; j++) {
        const hx_score_case *k = &sc->cases[j];
        int s = category_slot(sc, k->category);
        if (s < 0) continue; /* more categories than slots: counted in the total only */
        hx_score_category *c = &sc->cat[s];
        c->cubes++;
        c->passed += k->passed, c->failed += !k->passed;
        c->failed_share += !k->share_passed;
        c->failed_shells += k->has_shells && !k->shells.passed;
        c->failed_parts += k->has_parts && !(k->parts_passed[0] && k->parts_passed[1]);
    }
}

hx_status hx_score_grade(const char *manifest_text, const char *manifest_path, const char *results_text,
                         const char *results_path, const hx_log *log, hx_scorecard *sc)
{
    hx_status st = HX_OK;
    manifest m = {0};
    result *r = NULL;
    memset(sc, 0, sizeof *sc);
    HX_TRY(manifest_read(manifest_text, manifest_path, &m));
    HX_TRY(results_read(results_text, results_path, &m, &r));
    if (log) hx_log_say(log, HX_LOG_INFO, "score: %d cubes of '%s' (suite version %d)", m.n, m.suite, m.suite_version);
    snprintf(sc->suite, sizeof sc->suite, "%s", m.suite);
    snprintf(sc->suite_helmix_version, sizeof sc->suite_helmix_version, "%s", m.version);
    snprintf(sc->manifest, sizeof sc->manifest, "%s", manifest_path);
    snprintf(sc->results, sizeof sc->results, "%s", results_path);
    sc->suite_version = m.suite_version;
    HX_ALLOC(sc->cases, m.n);
    for (int i = 0; i < m.n; i++) {
        sc->n = i + 1; /* so that a failure frees what this case holds */
        HX_TRY(grade_case(&m.c[i], &r[i], manifest_path, results_path, &sc->cases[i]));
        if (log && sc->cases[i].has_parts) hx_log_say(log, HX_LOG_INFO, "score: parts of %s read and graded", m.c[i].name);
        sc->n_passed += sc->cases[i].passed;
    }
    sc->passed = sc->n_passed == sc->n;
    categories(sc);
fail:
    results_free(r, m.n);
    manifest_free(&m);
    if (st != HX_OK) hx_score_clear(sc);
    return st;
}

/* ---- files ------------------------------------------------------------------------------ */

static char *slurp(const char *path)
{
    FILE *fp = fopen(path, "rb");
    char *buf = NULL;
    long len = -1;
    if (fp && fseek(fp, 0, SEEK_END) == 0 && (len = ftell(fp)) >= 0 && fseek(fp, 0, SEEK_SET) == 0 &&
        (buf = malloc((size_t)len + 1)) && fread(buf, 1, (size_t)len, fp) == (size_t)len)
        buf[len] = '\0';
    else free(buf), buf = NULL;
    if (fp) fclose(fp);
    return buf;
}

hx_status hx_score_files(const char *manifest_path, const char *results_path, const hx_log *log, hx_scorecard *sc)
{
    memset(sc, 0, sizeof *sc);
    char *mt = slurp(manifest_path), *rt = mt ? slurp(results_path) : NULL;
    hx_status st;
    if (!mt) st = hx_error_set(HX_ERR_ARG, "manifest %s: cannot read the file", manifest_path);
    else if (!rt) st = hx_error_set(HX_ERR_ARG, "results %s: cannot read the file", results_path);
    else st = hx_score_grade(mt, manifest_path, rt, results_path, log, sc);
    free(mt), free(rt);
    return st;
}

void hx_score_clear(hx_scorecard *sc)
{
    if (!sc) return;
    for (int i = 0; sc->cases && i < sc->n; i++) case_shells_free(&sc->cases[i].shells);
    free(sc->cases);
    memset(sc, 0, sizeof *sc);
}

/* ---- the table -------------------------------------------------------------------------- */

static const char *verdict_word(int passed) { return passed ? "PASS" : "FAIL"; }

static void row(FILE *out, int wname, const char *name, const char *cat, const char *check, const char *ans,
                const char *got, double err, double tol, int passed)
{
    fprintf(out, "%-*s  %-9s %-26s %14s %14s %11.3g %10.3g  %s\n", wname, name, cat, check, ans, got, err, tol,
            verdict_word(passed));
}

static void print_case(FILE *out, int wname, const hx_score_case *k)
{
    char name[2 * HX_SCORE_NAME + 4], a[32], b[32], check[64];
    if (k->variant[0]) snprintf(name, sizeof name, "%s [%s]", k->name, k->variant);
    else snprintf(name, sizeof name, "%s", k->name);
    snprintf(a, sizeof a, "%.8g", k->answer), snprintf(b, sizeof b, "%.8g", k->measured);
    row(out, wname, name, k->category, "compressive share", a, b, k->error, k->tolerance, k->share_passed);
    if (k->has_shells) {
        const hx_score_shells *s = &k->shells;
        int w = 0; /* the worst shell and part, shown with its values */
        for (int i = 0; i < s->n; i++)
            if (fmax(fabs(s->err_comp[i]), fabs(s->err_sol[i])) >= fmax(fabs(s->err_comp[w]), fabs(s->err_sol[w]))) w = i;
        int comp = s->n && fabs(s->err_comp[w]) >= fabs(s->err_sol[w]);
        snprintf(check, sizeof check, "shells (%d), worst k=%g %s", s->n, s->n ? s->k[w] : 0.0, comp ? "comp" : "sol");
        snprintf(a, sizeof a, "%.6g", s->n ? (comp ? s->ans_comp[w] : s->ans_sol[w]) : 0.0);
        snprintf(b, sizeof b, "%.6g", s->n ? (comp ? s->got_comp[w] : s->got_sol[w]) : 0.0);
        row(out, wname, "", "", check, s->n ? a : "-", s->n ? b : "-", s->n ? (comp ? s->err_comp[w] : s->err_sol[w]) : 0,
            s->tolerance, s->passed);
    }
    if (k->has_parts)
        for (int p = 0; p < 2; p++) {
            snprintf(check, sizeof check, "%s part, rms", PART_NAME[p]);
            snprintf(a, sizeof a, "%.6g", k->parts_answer_rms[p]), snprintf(b, sizeof b, "%.6g", k->parts_measured_rms[p]);
            row(out, wname, "", "", check, a, b, k->parts_error[p], k->parts_tolerance, k->parts_passed[p]);
        }
}

void hx_score_print(FILE *out, const hx_scorecard *sc)
{
    int wname = 4, notes = 0;
    for (int i = 0; i < sc->n; i++) {
        const hx_score_case *k = &sc->cases[i];
        int w = (int)strlen(k->name) + (k->variant[0] ? (int)strlen(k->variant) + 3 : 0);
        wname = w > wname ? w : wname;
        notes += k->note[0] != 0;
    }
    fprintf(out, "helmix %s score: %s against %s\n", HX_VERSION, sc->results, sc->manifest);
    fprintf(out, "  %s, version %d (made by helmix %s), %d cubes\n", sc->suite[0] ? sc->suite : "suite", sc->suite_version,
            sc->suite_helmix_version[0] ? sc->suite_helmix_version : "?", sc->n);
    fprintf(out, "  errors: share measured - answer; shells (got - answer) / E_shell of the worst shell;\n"
                 "  parts rms(got - answer) / rms(field)\n\n");
    fprintf(out, "%-*s  %-9s %-26s %14s %14s %11s %10s  %s\n", wname, "cube", "category", "check", "answer", "measured",
            "error", "tolerance", "verdict");
    for (int i = 0; i < sc->n; i++) print_case(out, wname, &sc->cases[i]);
    if (notes) {
        fprintf(out, "\nnotes:\n");
        for (int i = 0; i < sc->n; i++)
            if (sc->cases[i].note[0]) fprintf(out, "  %s: %s\n", sc->cases[i].name, sc->cases[i].note);
    }
    fprintf(out, "\n%-10s %6s %7s %7s  %s\n", "category", "cubes", "passed", "failed", "failing (share / shells / parts)");
    for (int c = 0; c < sc->ncat; c++) {
        const hx_score_category *g = &sc->cat[c];
        fprintf(out, "%-10s %6d %7d %7d  ", g->name, g->cubes, g->passed, g->failed);
        if (!g->failed) fprintf(out, "-\n");
        else {
            fprintf(out, "%d / %d / %d:", g->failed_share, g->failed_shells, g->failed_parts);
            for (int i = 0; i < sc->n; i++)
                if (!sc->cases[i].passed && !strcmp(sc->cases[i].category, g->name)) fprintf(out, " %s", sc->cases[i].name);
            fprintf(out, "\n");
        }
    }
    fprintf(out, "\nverdict: %s (%d of %d cubes passed)\n", verdict_word(sc->passed), sc->n_passed, sc->n);
}

/* ---- JSON ------------------------------------------------------------------------------- */

static cJSON *array(const double *v, int n)
{
    cJSON *a = cJSON_CreateArray();
    for (int i = 0; a && i < n; i++) cJSON_AddItemToArray(a, cJSON_CreateNumber(v[i]));
    return a;
}

static cJSON *check_object(double ans, double measured, double error, double tol, int passed)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddNumberToObject(o, "answer", ans);
    cJSON_AddNumberToObject(o, "measured", measured);
    cJSON_AddNumberToObject(o, "error", error);
    cJSON_AddNumberToObject(o, "tolerance", tol);
    cJSON_AddBoolToObject(o, "passed", passed);
    return o;
}

static cJSON *case_json(const hx_score_case *k)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "name", k->name);
    cJSON_AddStringToObject(o, "category", k->category);
    if (k->variant[0]) cJSON_AddStringToObject(o, "variant", k->variant);
    else cJSON_AddNullToObject(o, "variant");
    cJSON_AddStringToObject(o, "given_as", k->from_inspect ? "inspect" : "values");
    cJSON_AddBoolToObject(o, "passed", k->passed);
    cJSON_AddItemToObject(o, "share", check_object(k->answer, k->measured, k->error, k->tolerance, k->share_passed));
    if (k->has_shells) {
        const hx_score_shells *s = &k->shells;
        cJSON *j = cJSON_AddObjectToObject(o, "shells");
        cJSON_AddNumberToObject(j, "graded", s->n);
        cJSON_AddNumberToObject(j, "max_error", s->max_error);
        cJSON_AddNumberToObject(j, "max_error_k", s->max_k);
        cJSON_AddNumberToObject(j, "tolerance", s->tolerance);
        cJSON_AddBoolToObject(j, "passed", s->passed);
        cJSON_AddItemToObject(j, "k", array(s->k, s->n));
        cJSON_AddItemToObject(j, "energy", array(s->energy, s->n));
        cJSON_AddItemToObject(j, "answer_compressive", array(s->ans_comp, s->n));
        cJSON_AddItemToObject(j, "answer_solenoidal", array(s->ans_sol, s->n));
        cJSON_AddItemToObject(j, "measured_compressive", array(s->got_comp, s->n));
        cJSON_AddItemToObject(j, "measured_solenoidal", array(s->got_sol, s->n));
        cJSON_AddItemToObject(j, "error_compressive", array(s->err_comp, s->n));
        cJSON_AddItemToObject(j, "error_solenoidal", array(s->err_sol, s->n));
    } else cJSON_AddNullToObject(o, "shells");
    if (k->has_parts) {
        cJSON *j = cJSON_AddObjectToObject(o, "parts");
        cJSON_AddNumberToObject(j, "field_rms", k->field_rms);
        for (int p = 0; p < 2; p++)
            cJSON_AddItemToObject(j, PART_NAME[p], check_object(k->parts_answer_rms[p], k->parts_measured_rms[p], k->parts_error[p],
                                                              k->parts_tolerance, k->parts_passed[p]));
    } else cJSON_AddNullToObject(o, "parts");
    if (k->ladder) {
        cJSON *j = cJSON_AddObjectToObject(o, "ladder");
        cJSON_AddStringToObject(j, "group", k->ladder_group);
        cJSON_AddNumberToObject(j, "level", k->ladder_level);
        cJSON_AddNumberToObject(j, "cells", k->ladder_cells);
    } else cJSON_AddNullToObject(o, "ladder");
    if (k->note[0]) cJSON_AddStringToObject(o, "note", k->note);
    else cJSON_AddNullToObject(o, "note");
    return o;
}

hx_status hx_score_json(const char *path, const hx_scorecard *sc)
{
    cJSON *root = cJSON_CreateObject();
    if (!root) return hx_error_set(HX_ERR_MEM, "out of memory building the JSON scorecard");
    cJSON_AddStringToObject(root, "helmix_version", HX_VERSION);
    cJSON_AddStringToObject(root, "manifest", sc->manifest);
    cJSON_AddStringToObject(root, "results", sc->results);
    cJSON_AddStringToObject(root, "suite", sc->suite);
    cJSON_AddNumberToObject(root, "suite_version", sc->suite_version);
    cJSON_AddStringToObject(root, "suite_helmix_version", sc->suite_helmix_version);
    cJSON_AddBoolToObject(root, "passed", sc->passed);
    cJSON_AddNumberToObject(root, "cubes", sc->n);
    cJSON_AddNumberToObject(root, "cubes_passed", sc->n_passed);
    cJSON *cases = cJSON_AddArrayToObject(root, "cases");
    for (int i = 0; i < sc->n; i++) cJSON_AddItemToArray(cases, case_json(&sc->cases[i]));
    cJSON *cats = cJSON_AddArrayToObject(root, "categories");
    for (int c = 0; c < sc->ncat; c++) {
        const hx_score_category *g = &sc->cat[c];
        cJSON *o = cJSON_CreateObject(), *failing = cJSON_CreateArray();
        cJSON_AddStringToObject(o, "category", g->name);
        cJSON_AddNumberToObject(o, "cubes", g->cubes);
        cJSON_AddNumberToObject(o, "passed", g->passed);
        cJSON_AddNumberToObject(o, "failed", g->failed);
        cJSON_AddNumberToObject(o, "failed_share", g->failed_share);
        cJSON_AddNumberToObject(o, "failed_shells", g->failed_shells);
        cJSON_AddNumberToObject(o, "failed_parts", g->failed_parts);
        for (int i = 0; i < sc->n; i++)
            if (!sc->cases[i].passed && !strcmp(sc->cases[i].category, g->name))
                cJSON_AddItemToArray(failing, cJSON_CreateString(sc->cases[i].name));
        cJSON_AddItemToObject(o, "failing", failing);
        cJSON_AddItemToArray(cats, o);
    }
    char *text = cJSON_Print(root);
    cJSON_Delete(root);
    if (!text) return hx_error_set(HX_ERR_MEM, "out of memory printing the JSON scorecard");
    FILE *fp = fopen(path, "w");
    int ok = fp && fputs(text, fp) >= 0 && fputc('\n', fp) != EOF;
    if (fp && fclose(fp) != 0) ok = 0;
    free(text);
    return ok ? HX_OK : hx_error_set(HX_ERR_IO, "cannot write the JSON scorecard %s", path);
}
