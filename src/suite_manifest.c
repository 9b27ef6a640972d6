/* suite_manifest.c — DIR/manifest.json (version 1): the conventions, and per cube its layout,
 * answer, variants, parts and suggested tolerances, as docs/manifest.schema.json describes.
 * Every number is printed by cJSON so that it reads back to the same double. Rank 0 only. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "helmix/diag.h"
#include "helmix/suite.h"
#include "helmix/version.h"
#include "suite_impl.h"

/* Add to obj unless an earlier addition failed; *ok turns 0 on the first failure. */
static void put(cJSON *obj, const char *key, cJSON *item, int *ok)
{
    if (!item || !obj) {
        *ok = 0;
        cJSON_Delete(item);
        return;
    }
    cJSON_AddItemToObject(obj, key, item);
}

static cJSON *numbers(const double *v, int n)
{
    cJSON *a = cJSON_CreateArray();
    for (int i = 0; a && i < n; i++) {
        cJSON *x = cJSON_CreateNumber(v[i]);
        if (!x) {
            cJSON_Delete(a);
            return NULL;
        }
        cJSON_AddItemToArray(a, x);
    }
    return a;
}

static cJSON *strings(const char (*v)[SUITE_PATH], int n)
{
    cJSON *a = cJSON_CreateArray();
    for (int i = 0; a && i < n; i++) {
        cJSON *x = cJSON_CreateString(v[i]);
        if (!x) {
            cJSON_Delete(a);
            return NULL;
        }
        cJSON_AddItemToArray(a, x);
    }
    return a;
}

cJSON *hx_suite_answer_json(const hx_diag *d)
{
    int ok = 1, last = 0;
    cJSON *a = cJSON_CreateObject(), *shells = cJSON_CreateArray();
    put(a, "compressive_share", cJSON_CreateNumber(d->fraction), &ok);
    put(a, "energy_total", cJSON_CreateNumber(d->e_total), &ok);
    put(a, "energy_compressive", cJSON_CreateNumber(d->e_comp), &ok);
    put(a, "energy_solenoidal", cJSON_CreateNumber(d->e_sol), &ok);
    put(a, "divergence_rms", cJSON_CreateNumber(d->div_rms), &ok);
    put(a, "vorticity_rms", cJSON_CreateNumber(d->vort_rms), &ok);
    for (int s = 1; s < d->nshell; s++)
        if (d->shell_modes[s] > 0) last = s;
    for (int s = 1; shells && s <= last; s++) { /* every shell from 1 to the last holding modes */
        cJSON *row = cJSON_CreateObject();
        put(row, "k", cJSON_CreateNumber(s), &ok);
        put(row, "modes", cJSON_CreateNumber(d->shell_modes[s]), &ok);
        put(row, "e_comp", cJSON_CreateNumber(d->shell_comp[s]), &ok);
        put(row, "e_sol", cJSON_CreateNumber(d->shell_sol[s]), &ok);
        if (row) cJSON_AddItemToArray(shells, row);
        else ok = 0;
    }
    put(a, "shells", shells, &ok);
    if (!ok) {
        cJSON_Delete(a);
        return NULL;
    }
    return a;
}

static cJSON *layout(const hx_suite_cube *c, int *ok)
{
    cJSON *l = cJSON_CreateObject();
    put(l, "vector", c->four_d ? cJSON_CreateString(c->vector[0]) : strings(c->vector, 3), ok);
    put(l, "component_axis", c->four_d ? cJSON_CreateString(c->comp_first ? "first" : "last") : cJSON_CreateNull(), ok);
    put(l, "order", cJSON_CreateString(c->order == HX_ORDER_XYZ ? "xyz" : "zyx"), ok);
    const double cells[3] = {(double)c->cells[0], (double)c->cells[1], (double)c->cells[2]};
    put(l, "cells", numbers(cells, 3), ok);
    put(l, "box", numbers(c->box, 3), ok);
    put(l, "precision", cJSON_CreateString(c->precision == HX_PREC_DOUBLE ? "double" : "single"), ok);
    put(l, "density", c->density[0] ? cJSON_CreateString(c->density) : cJSON_CreateNull(), ok);
    return l;
}

static cJSON *parts(const hx_suite_cube *c, int *ok)
{
    if (!c->has_parts) return cJSON_CreateNull();
    cJSON *p = cJSON_CreateObject();
    put(p, "solenoidal", c->sol_zero ? cJSON_CreateString("zero") : strings(c->sol, 3), ok);
    put(p, "compressive", c->comp_zero ? cJSON_CreateString("zero") : strings(c->comp, 3), ok);
    return p;
}

/* The answer objects are moved into the document (the cube keeps NULL). */
static cJSON *cube_json(hx_suite_cube *c, int *ok)
{
    cJSON *o = cJSON_CreateObject();
    put(o, "name", cJSON_CreateString(c->name), ok);
    put(o, "category", cJSON_CreateString(c->category), ok);
    put(o, "description", cJSON_CreateString(c->description), ok);
    put(o, "source", cJSON_CreateString(c->source), ok);
    put(o, "file", cJSON_CreateString(c->file), ok);
    put(o, "layout", layout(c, ok), ok);
    put(o, "weighting", cJSON_CreateString(c->mass ? "mass" : "volume"), ok);
    put(o, "answer", c->answer, ok);
    c->answer = NULL;
    cJSON *vars = cJSON_CreateObject();
    for (int i = 0; i < c->nvariant; i++) {
        suite_variant *v = &c->variant[i];
        cJSON *e = cJSON_CreateObject();
        put(e, "description", cJSON_CreateString(v->description), ok);
        put(e, "remove_scale", v->remove_scale > 0 ? cJSON_CreateNumber(v->remove_scale) : cJSON_CreateNull(), ok);
        put(e, "answer", v->answer, ok);
        v->answer = NULL;
        put(vars, v->key, e, ok);
    }
    put(o, "variants", vars, ok);
    put(o, "parts", parts(c, ok), ok);
    if (c->ladder_level >= 0) {
        cJSON *l = cJSON_CreateObject();
        put(l, "group", cJSON_CreateString("ladder"), ok);
        put(l, "level", cJSON_CreateNumber(c->ladder_level), ok);
        put(l, "cells", cJSON_CreateNumber((double)c->ladder_cells), ok);
        put(o, "ladder", l, ok);
    }
    cJSON *t = cJSON_CreateObject();
    put(t, "compressive_share", cJSON_CreateNumber(c->tol_share), ok);
    put(t, "shells_relative", cJSON_CreateNumber(c->tol_shells), ok);
    put(t, "parts_rms_relative", cJSON_CreateNumber(c->tol_parts), ok);
    put(t, "reason", cJSON_CreateString(c->tol_reason), ok);
    put(o, "tolerance", t, ok);
    return o;
}

static cJSON *conventions(int *ok)
{
    cJSON *c = cJSON_CreateObject();
    put(c, "transform", cJSON_CreateString("v_hat(n) = (1/N) sum_x v(x) exp(-i k_n . x), i.e. numpy.fft.fftn(v)/N"), ok);
    put(c, "wavevector", cJSON_CreateString("k_n,a = 2 pi n_a / L_a, the Nyquist index counted as -N/2"), ok);
    put(c, "shell", cJSON_CreateString("s = round(|k| / (2 pi / max(Lx, Ly, Lz))), the k = 0 mode excluded"), ok);
    put(c, "energy", cJSON_CreateString("E = 1/2 sum over all modes of |v_hat|^2; compressive: 1/2 sum |k_hat . v_hat|^2; "
                                        "solenoidal: the rest"), ok);
    put(c, "mass_weighting", cJSON_CreateString("for weighting = mass the field decomposed is sqrt(rho) v"), ok);
    return c;
}

hx_status hx_suite_manifest_write(const char *path, hx_suite_cube *cubes, int n)
{
    int ok = 1;
    cJSON *root = cJSON_CreateObject(), *arr = cJSON_CreateArray();
    put(root, "suite", cJSON_CreateString("helmix known-answer suite"), &ok);
    put(root, "suite_version", cJSON_CreateNumber(HX_SUITE_VERSION), &ok);
    put(root, "helmix_version", cJSON_CreateString(HX_VERSION), &ok);
    put(root, "conventions", conventions(&ok), &ok);
    for (int i = 0; arr && i < n; i++) {
        cJSON *c = cube_json(&cubes[i], &ok);
        if (c) cJSON_AddItemToArray(arr, c);
        else ok = 0;
    }
    put(root, "cubes", arr, &ok);
    char *text = ok ? cJSON_Print(root) : NULL;
    cJSON_Delete(root);
    if (!text) return hx_error_set(HX_ERR_MEM, "out of memory building the manifest");
    char partial[HX_PATH_MAX + 16];
    snprintf(partial, sizeof partial, "%s.partial", path);
    FILE *fp = fopen(partial, "w");
    int good = fp && fputs(text, fp) >= 0 && fputc('\n', fp) != EOF;
    if (fp && fclose(fp) != 0) good = 0;
    free(text);
    if (!good) {
        unlink(partial);
        return hx_error_set(HX_ERR_IO, "cannot write %s (disk full or not writable?)", partial);
    }
    if (rename(partial, path) != 0) {
        unlink(partial);
        return hx_error_set(HX_ERR_IO, "cannot rename %s to %s", partial, path);
    }
    return HX_OK;
}
