/* test_report.c — the summary in files (helmix/report.h): the JSON document and the per-shell
 * CSV table of a summary built by hand hold the same shells from the same k (0), the same
 * numbers to the last bit (each text reads back as exactly the double it came from), and the
 * same empty shell: null in JSON (RFC 8259 has no NaN) and an empty field in CSV (RFC 4180);
 * the check block keeps asked, target and measured apart (null where nothing was asked); the
 * printed table says "none" for a slope that could not be fitted instead of "nan". */
#include <cjson/cJSON.h>
#include <math.h>
#include <stdlib.h>
#include <unistd.h>

#include "helmix/report.h"
#include "hx_test.h"

enum { NS = 6 };

static char dir[64];

/* Six shells: 0 (the mean flow: nothing), 1 and 2 with energy, 3 empty with modes, 4 with
 * energy, 5 without modes. Numbers whose 15-digit text would not read back exactly. */
static hx_diag summary(void)
{
    hx_diag d = {0};
    d.cells[0] = d.cells[1] = d.cells[2] = 8;
    d.box[0] = d.box[1] = d.box[2] = 1.0;
    d.ranks = 1;
    hx_diag_shells(&d, NS);
    const double modes[NS] = {0, 6, 18, 26, 56, 0};
    const double e[NS] = {0, 0.1 + 0.2, 1.0 / 3.0, 0, 2.5e-17 / 3.0, 0};
    const double comp[NS] = {0, 0.1, 1.0 / 7.0, 0, 1e-18, 0};
    for (int s = 0; s < NS; s++) d.shell_modes[s] = modes[s], d.shell_e[s] = e[s], d.shell_comp[s] = comp[s];
    d.fit_kmin = 2, d.fit_kmax = 4;
    hx_diag_finish(&d); /* three shells with energy in [2, 4]? 2 and 4 only: no slope */
    return d;
}

static char *slurp(const char *path)
{
    FILE *fp = fopen(path, "rb");
    if (!fp) return NULL;
    fseek(fp, 0, SEEK_END);
    long n = ftell(fp);
    fseek(fp, 0, SEEK_SET);
    char *buf = calloc((size_t)n + 1, 1);
    if (buf && fread(buf, 1, (size_t)n, fp) != (size_t)n) buf[0] = '\0';
    fclose(fp);
    return buf;
}

static double item(const cJSON *a, int i)
{
    const cJSON *x = cJSON_GetArrayItem(a, i);
    return cJSON_IsNumber(x) ? x->valuedouble : NAN;
}

static void test_files(void)
{
    hx_diag d = summary();
    CHECK(isnan(d.slope)); /* shells 2 and 4 only: fewer than 3 */
    hx_verdict v = {0};
    v.n = 2, v.passed = 1;
    v.line[0] = (hx_verdict_line){"spectral slope", 2.0, 1.914, 1.93, 0.05, "fit on this grid", 1};
    v.line[1] = (hx_verdict_line){"largest mean component", NAN, 0.0, 1e-17, 1e-9, "zero-mean synthesis", 1};
    char jp[128], cp[128];
    snprintf(jp, sizeof jp, "%s/r.json", dir);
    snprintf(cp, sizeof cp, "%s/r.csv", dir);
    CHECK(hx_report_json(jp, &d, &v, "cube.h5") == HX_OK);
    CHECK(hx_report_csv(cp, &d) == HX_OK);
    char *js = slurp(jp), *cs = slurp(cp);
    CHECK(js && cs);
    if (!js || !cs) goto done;
    CHECK(strstr(js, "nan") == NULL && strstr(js, "NaN") == NULL && strstr(js, "inf") == NULL);
    cJSON *root = cJSON_Parse(js);
    CHECK(root != NULL);
    if (!root) goto done;
    const cJSON *sh = cJSON_GetObjectItemCaseSensitive(root, "shells");
    const cJSON *k = cJSON_GetObjectItemCaseSensitive(sh, "k"), *m = cJSON_GetObjectItemCaseSensitive(sh, "modes");
    const cJSON *e = cJSON_GetObjectItemCaseSensitive(sh, "energy"), *c = cJSON_GetObjectItemCaseSensitive(sh, "compressive");
    const cJSON *so = cJSON_GetObjectItemCaseSensitive(sh, "solenoidal");
    const cJSON *f = cJSON_GetObjectItemCaseSensitive(sh, "compressive_fraction");
    CHECK(cJSON_GetArraySize(k) == NS && cJSON_GetArraySize(f) == NS && item(k, 0) == 0);
    /* every JSON number reads back as the double it came from (cJSON's own %1.15g would not) */
    for (int s = 0; s < NS; s++) {
        CHECK(item(k, s) == s && item(m, s) == d.shell_modes[s] && item(e, s) == d.shell_e[s]);
        CHECK(item(c, s) == d.shell_comp[s] && item(so, s) == d.shell_sol[s]);
        if (d.shell_e[s] > 0) CHECK(item(f, s) == d.shell_comp[s] / d.shell_e[s]);
        else CHECK(cJSON_IsNull(cJSON_GetArrayItem(f, s))); /* 0/0: null */
    }
    const cJSON *slope = cJSON_GetObjectItemCaseSensitive(cJSON_GetObjectItemCaseSensitive(root, "slope"), "value");
    CHECK(cJSON_IsNull(slope));
    /* the CSV: the same rows from k = 0, the same numbers, an empty field where JSON has null */
    char *save = NULL, *line = strtok_r(cs, "\n", &save);
    CHECK(line && !strcmp(line, "k,modes,energy,compressive,solenoidal,compressive_fraction"));
    int rows = 0;
    for (line = strtok_r(NULL, "\n", &save); line; line = strtok_r(NULL, "\n", &save), rows++) {
        double x[5];
        char *p = line, *end = NULL;
        long ks = strtol(p, &end, 10);
        CHECK(ks == rows && *end == ',');
        for (int col = 0; col < 4; col++) {
            p = end + 1;
            x[col] = strtod(p, &end);
            CHECK(end > p && *end == ',');
        }
        p = end + 1;
        int empty = *p == '\0';
        x[4] = empty ? NAN : strtod(p, &end);
        const int s = (int)ks;
        if (s < 0 || s >= NS) continue;
        CHECK(x[0] == item(m, s) && x[1] == item(e, s) && x[2] == item(c, s) && x[3] == item(so, s));
        CHECK(empty == cJSON_IsNull(cJSON_GetArrayItem(f, s)));
        if (!empty) CHECK(x[4] == item(f, s) && *end == '\0');
    }
    CHECK(rows == NS);
    /* the check block: asked (null when nothing was asked), target, where the target comes from */
    const cJSON *lines = cJSON_GetObjectItemCaseSensitive(cJSON_GetObjectItemCaseSensitive(root, "check"), "lines");
    const cJSON *l0 = cJSON_GetArrayItem(lines, 0), *l1 = cJSON_GetArrayItem(lines, 1);
    CHECK(cJSON_GetArraySize(lines) == 2);
    CHECK(cJSON_GetObjectItemCaseSensitive(l0, "asked")->valuedouble == 2.0);
    CHECK(cJSON_GetObjectItemCaseSensitive(l0, "target")->valuedouble == 1.914);
    CHECK(!strcmp(cJSON_GetStringValue(cJSON_GetObjectItemCaseSensitive(l0, "target_is")), "fit on this grid"));
    CHECK(cJSON_IsNull(cJSON_GetObjectItemCaseSensitive(l1, "asked")));
    CHECK(cJSON_GetObjectItemCaseSensitive(l0, "requested") == NULL);
    cJSON_Delete(root);
done:
    free(js);
    free(cs);
    unlink(jp);
    unlink(cp);
    hx_diag_clear(&d);
}

/* The table on a stream: a slope that could not be fitted reads "none", never "nan". */
static void test_print(void)
{
    hx_diag d = summary();
    char buf[8192] = {0};
    FILE *fp = fmemopen(buf, sizeof buf - 1, "w");
    CHECK(fp != NULL);
    if (!fp) return;
    hx_report_print(fp, &d, "cube.h5");
    fclose(fp);
    CHECK_STR_CONTAINS(buf, "spectral slope over shells [2, 4]: none");
    CHECK(strstr(buf, "nan") == NULL);
    hx_diag_clear(&d);
}

/* An unwritable path is an I/O error with the path in its message. */
static void test_unwritable(void)
{
    hx_diag d = summary();
    CHECK(hx_report_csv("/nonexistent-dir/x.csv", &d) == HX_ERR_IO);
    CHECK_STR_CONTAINS(hx_error_message(), "/nonexistent-dir/x.csv");
    CHECK(hx_report_json("/nonexistent-dir/x.json", &d, NULL, "cube.h5") == HX_ERR_IO);
    hx_diag_clear(&d);
}

int main(void)
{
    snprintf(dir, sizeof dir, "/tmp/helmix_test_report_XXXXXX");
    if (!mkdtemp(dir)) return 1;
    test_files();
    test_print();
    test_unwritable();
    rmdir(dir);
    return hx_test_finish();
}
