/* test_score.c — grading by the rules of helmix/score.h on small hand-written manifests and
 * results: exact answers pass, answers beyond a tolerance fail, shell and part errors equal
 * values worked by hand, variants are chosen by name or remove_scale, and every malformed
 * input gives HX_ERR_ARG with one line naming the document, cube and key. */
#include <cjson/cJSON.h>
#include <hdf5.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "helmix/score.h"
#include "hx_test.h"

/* Two cubes: "a" (mix, shells k = 1, 2 and a shell of round-off at k = 3, a variant with
 * remove_scale 0.5) and "b" (a ladder step). Shell energies chosen so errors are easy sums. */
static const char *MANIFEST =
    "{\"suite\": \"unit\", \"suite_version\": 1, \"helmix_version\": \"t\", \"conventions\": {},"
    " \"cubes\": ["
    "  {\"name\": \"a\", \"category\": \"mix\", \"file\": \"a.h5\", \"weighting\": \"volume\","
    "   \"answer\": {\"compressive_share\": 0.25, \"shells\": ["
    "      {\"k\": 1, \"modes\": 6, \"e_comp\": 0.2, \"e_sol\": 0.6},"
    "      {\"k\": 2, \"modes\": 18, \"e_comp\": 0.05, \"e_sol\": 0.15},"
    "      {\"k\": 3, \"modes\": 26, \"e_comp\": 1e-15, \"e_sol\": 1e-15}]},"
    "   \"variants\": {\"smooth\": {\"description\": \"d\", \"remove_scale\": 0.5,"
    "      \"answer\": {\"compressive_share\": 0.2, \"shells\": []}}},"
    "   \"parts\": null,"
    "   \"tolerance\": {\"compressive_share\": 1e-3, \"shells_relative\": 1e-3, \"parts_rms_relative\": 1e-3}},"
    "  {\"name\": \"b\", \"category\": \"ladder\", \"file\": \"b.h5\", \"answer\": {\"compressive_share\": 0.5},"
    "   \"variants\": {}, \"parts\": null, \"ladder\": {\"group\": \"ladder\", \"level\": 1, \"cells\": 64},"
    "   \"tolerance\": {\"compressive_share\": 1e-2, \"shells_relative\": null, \"parts_rms_relative\": null}}]}";

static hx_status grade(const char *manifest, const char *results, hx_scorecard *sc)
{
    return hx_score_grade(manifest, "/nowhere/manifest.json", results, "/nowhere/results.json", NULL, sc);
}

/* HX_ERR_ARG with one line holding every needle. */
static void refused(const char *manifest, const char *results, const char *n1, const char *n2)
{
    hx_scorecard sc;
    hx_status st = grade(manifest, results, &sc);
    CHECK(st == HX_ERR_ARG);
    CHECK(sc.n == 0 && sc.cases == NULL);
    CHECK(strchr(hx_error_message(), '\n') == NULL);
    CHECK_STR_CONTAINS(hx_error_message(), n1);
    if (n2) CHECK_STR_CONTAINS(hx_error_message(), n2);
}

static void test_exact_and_tolerance(void)
{
    hx_scorecard sc;
    /* exact answers (the round-off shell k = 3 may be left out: it is below 1e-12 of the peak) */
    const char *exact = "{\"a\": {\"compressive_share\": 0.25, \"shells\": ["
                        "{\"k\": 1, \"e_comp\": 0.2, \"e_sol\": 0.6}, {\"k\": 2, \"e_comp\": 0.05, \"e_sol\": 0.15}]},"
                        " \"b\": {\"compressive_share\": 0.5}}";
    CHECK(grade(MANIFEST, exact, &sc) == HX_OK);
    CHECK(sc.n == 2 && sc.passed && sc.n_passed == 2);
    CHECK(sc.cases[0].share_passed && sc.cases[0].error == 0 && sc.cases[0].tolerance == 1e-3);
    CHECK(sc.cases[0].has_shells && sc.cases[0].shells.n == 2 && sc.cases[0].shells.passed);
    CHECK(sc.cases[0].shells.max_error == 0);
    CHECK(!sc.cases[1].has_shells && sc.cases[1].ladder && sc.cases[1].ladder_cells == 64 && sc.cases[1].ladder_level == 1);
    CHECK(!strcmp(sc.suite, "unit") && sc.suite_version == 1);
    hx_score_clear(&sc);
    CHECK(sc.cases == NULL && sc.n == 0);

    /* share 0.9 x tolerance off passes, 1.1 x fails; the error is measured - answer */
    CHECK(grade(MANIFEST, "{\"a\": {\"compressive_share\": 0.2509}, \"b\": {\"compressive_share\": 0.5}}", &sc) == HX_OK);
    CHECK(sc.passed && sc.cases[0].share_passed);
    CHECK_CLOSE(sc.cases[0].error, 9e-4, 1e-15);
    hx_score_clear(&sc);
    CHECK(grade(MANIFEST, "{\"a\": {\"compressive_share\": 0.2489}, \"b\": {\"compressive_share\": 0.5}}", &sc) == HX_OK);
    CHECK(!sc.passed && !sc.cases[0].share_passed && !sc.cases[0].passed && sc.cases[1].passed);
    CHECK_CLOSE(sc.cases[0].error, -1.1e-3, 1e-15);
    CHECK(sc.n_passed == 1);
    hx_score_clear(&sc);
}

/* Shell errors relative to the shell's energy E_s = e_comp + e_sol of the answer:
 * k = 1: e_comp 0.2 -> 0.2004 gives 0.0004 / 0.8 = 5e-4 (passes 1e-3);
 * k = 2: e_sol 0.15 -> 0.1497 gives -0.0003 / 0.2 = -1.5e-3 (fails 1e-3). Worked by hand. */
static void test_shells(void)
{
    hx_scorecard sc;
    const char *r = "{\"a\": {\"compressive_share\": 0.25, \"shells\": ["
                    "{\"k\": 2, \"e_comp\": 0.05, \"e_sol\": 0.1497}, {\"k\": 1, \"e_comp\": 0.2004, \"e_sol\": 0.6},"
                    "{\"k\": 9, \"e_comp\": 5, \"e_sol\": 5}]}, \"b\": {\"compressive_share\": 0.5}}";
    CHECK(grade(MANIFEST, r, &sc) == HX_OK);
    const hx_score_shells *s = &sc.cases[0].shells;
    CHECK(s->n == 2); /* k = 3 under the floor, k = 9 not in the answer: neither graded */
    CHECK(s->k[0] == 1 && s->k[1] == 2);
    CHECK_CLOSE(s->err_comp[0], 5e-4, 1e-14);
    CHECK_CLOSE(s->err_sol[0], 0, 1e-15);
    CHECK_CLOSE(s->err_sol[1], -1.5e-3, 1e-14);
    CHECK_CLOSE(s->max_error, 1.5e-3, 1e-14);
    CHECK(s->max_k == 2 && !s->passed && sc.cases[0].share_passed && !sc.cases[0].passed);
    CHECK(sc.cat[0].failed_shells == 1 && sc.cat[0].failed_share == 0);
    hx_score_clear(&sc);
}

static void test_variants_and_inspect(void)
{
    hx_scorecard sc;
    /* by name: graded against the variant's share 0.2 */
    CHECK(grade(MANIFEST, "{\"a\": {\"compressive_share\": 0.2, \"variant\": \"smooth\"}, \"b\": {\"compressive_share\": 0.5}}",
                &sc) == HX_OK);
    CHECK(sc.passed && !strcmp(sc.cases[0].variant, "smooth") && sc.cases[0].answer == 0.2);
    hx_score_clear(&sc);
    /* an inspect --json document: energy.compressive_fraction and parallel shell arrays */
    const char *ins = "{\"a\": {\"helmix_version\": \"0\", \"remove_scale\": 0, \"mass_weighted\": false,"
                      " \"energy\": {\"compressive_fraction\": 0.2504},"
                      " \"shells\": {\"k\": [0, 1, 2, 3], \"compressive\": [0, 0.2, 0.05, 0], \"solenoidal\": [0, 0.6, 0.15, 0],"
                      "   \"energy\": [0, 0.8, 0.2, 0]}},"
                      " \"b\": {\"compressive_share\": 0.5}}";
    CHECK(grade(MANIFEST, ins, &sc) == HX_OK);
    CHECK(sc.passed && sc.cases[0].from_inspect && sc.cases[0].variant[0] == 0 && sc.cases[0].shells.n == 2);
    CHECK_CLOSE(sc.cases[0].measured, 0.2504, 1e-15);
    hx_score_clear(&sc);
    /* its remove_scale 0.5 picks the variant "smooth" */
    const char *ins2 = "{\"a\": {\"helmix_version\": \"0\", \"remove_scale\": 0.5, \"energy\": {\"compressive_fraction\": 0.2},"
                       " \"shells\": {\"k\": [1], \"compressive\": [0], \"solenoidal\": [1]}}, \"b\": {\"compressive_share\": 0.5}}";
    CHECK(grade(MANIFEST, ins2, &sc) == HX_OK);
    CHECK(sc.passed && !strcmp(sc.cases[0].variant, "smooth") && !sc.cases[0].has_shells); /* the variant lists no shells */
    CHECK_STR_CONTAINS(sc.cases[0].note, "shells not graded");
    hx_score_clear(&sc);
    refused(MANIFEST, "{\"a\": {\"helmix_version\": \"0\", \"remove_scale\": 0.3, \"energy\": {\"compressive_fraction\": 0.2}},"
                      " \"b\": {\"compressive_share\": 0.5}}", "cube 'a'", "remove_scale");
    refused(MANIFEST, "{\"a\": {\"helmix_version\": \"0\", \"energy\": {}}, \"b\": {\"compressive_share\": 0.5}}", "cube 'a'",
            "energy.compressive_fraction");
    refused(MANIFEST, "{\"a\": {\"helmix_version\": \"0\", \"energy\": {\"compressive_fraction\": 0.25},"
                      " \"shells\": {\"k\": [1, 2], \"compressive\": [0.2], \"solenoidal\": [0.6, 0.15]}}, \"b\": {\"compressive_share\": 0.5}}",
            "cube 'a'", "shells.compressive");
}

static void test_malformed(void)
{
    const char *b = ", \"b\": {\"compressive_share\": 0.5}}";
    char r[512];
    refused(MANIFEST, "[1, 2]", "results /nowhere/results.json", "must be a JSON object");
    refused(MANIFEST, "{\"a\": ", "results", "not valid JSON");
    refused(MANIFEST, "{\"a\": {\"compressive_share\": 0.25}}", "cube 'b'", "missing");
    snprintf(r, sizeof r, "{\"a\": {\"compressive_share\": \"0.25\"}%s", b);
    refused(MANIFEST, r, "cube 'a'", "compressive_share: must be a number, not a string");
    snprintf(r, sizeof r, "{\"a\": {\"compressive_share\": null}%s", b);
    refused(MANIFEST, r, "cube 'a'", "compressive_share");
    snprintf(r, sizeof r, "{\"a\": {\"compressive_share\": 0.25, \"shells\": [{\"k\": 1, \"e_comp\": true, \"e_sol\": 0}]}%s", b);
    refused(MANIFEST, r, "cube 'a'", "shells[0].e_comp");
    snprintf(r, sizeof r, "{\"a\": {\"compressive_share\": 0.25, \"shells\": [{\"k\": 1, \"e_comp\": 0.2, \"e_sol\": 0.6}]}%s", b);
    refused(MANIFEST, r, "cube 'a'", "no shell k = 2");
    snprintf(r, sizeof r, "{\"a\": {\"compressive_share\": 0.25}, \"zz\": {\"compressive_share\": 0.1}%s", b);
    refused(MANIFEST, r, "cube 'zz'", "not in the manifest");
    snprintf(r, sizeof r, "{\"a\": {\"compressive_share\": 0.25}, \"a\": {\"compressive_share\": 0.25}%s", b);
    refused(MANIFEST, r, "cube 'a'", "twice");
    snprintf(r, sizeof r, "{\"a\": {\"compressive_share\": 0.25, \"variant\": \"rough\"}%s", b);
    refused(MANIFEST, r, "cube 'a': variant", "'rough' is not a variant of the cube (variants: smooth)");
    snprintf(r, sizeof r, "{\"a\": 0.25%s", b);
    refused(MANIFEST, r, "cube 'a'", "must be an object");
    snprintf(r, sizeof r, "{\"a\": {\"compressive_share\": 0.25, \"parts\": {\"solenoidal\": [\"x.h5\"], \"compressive\": \"zero\"}}%s", b);
    refused(MANIFEST, r, "cube 'a'", "parts.solenoidal");
    /* the manifest: version, required keys, duplicate names */
    refused("{\"suite_version\": 2, \"cubes\": []}", "{}", "manifest /nowhere/manifest.json", "suite_version 2");
    refused("{\"suite_version\": \"1\", \"cubes\": []}", "{}", "manifest", "suite_version: must be a number");
    refused("{\"suite_version\": 1, \"cubes\": []}", "{}", "manifest", "cubes");
    refused("{\"suite_version\": 1, \"cubes\": [{\"name\": \"x\", \"category\": \"pure\", \"file\": \"x.h5\","
            " \"answer\": {\"compressive_share\": 1}, \"tolerance\": {}}]}",
            "{\"x\": {\"compressive_share\": 1}}", "cube 'x'", "tolerance.compressive_share");
    refused("{\"suite_version\": 1, \"cubes\": [{\"name\": \"x\", \"category\": \"pure\", \"file\": \"x.h5\","
            " \"answer\": {\"compressive_share\": 1.5}, \"tolerance\": {\"compressive_share\": 0}}]}",
            "{\"x\": {\"compressive_share\": 1}}", "cube 'x'", "answer.compressive_share");
    const char *two = "{\"suite_version\": 1, \"cubes\": [{\"name\": \"x\", \"category\": \"pure\", \"file\": \"x.h5\","
                      " \"answer\": {\"compressive_share\": 1}, \"tolerance\": {\"compressive_share\": 0}},"
                      " {\"name\": \"x\", \"category\": \"pure\", \"file\": \"y.h5\", \"answer\": {\"compressive_share\": 1},"
                      " \"tolerance\": {\"compressive_share\": 0}}]}";
    refused(two, "{\"x\": {\"compressive_share\": 1}}", "cube 'x'", "named twice");
    hx_scorecard sc;
    CHECK(hx_score_files("/nowhere/m.json", "/nowhere/r.json", NULL, &sc) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "manifest /nowhere/m.json: cannot read the file");
}

/* ---- parts, through real HDF5 files -------------------------------------------------- */

static int write_set(hid_t f, const char *name, const double *v)
{
    hsize_t d[3] = {2, 2, 2};
    hid_t sp = H5Screate_simple(3, d, NULL), ds = H5Dcreate2(f, name, H5T_IEEE_F64LE, sp, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    int ok = ds >= 0 && H5Dwrite(ds, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v) >= 0;
    if (ds >= 0) H5Dclose(ds);
    H5Sclose(sp);
    return ok;
}

/* The answer's solenoidal part is (1, 0, 0) in all 8 cells, its compressive part zero, so
 * the field's rms is 1. A tool part of x = 1.001 has rms error sqrt(8e-6 / 8) = 1e-3; a tool
 * compressive part of 0.0005 in z has error 5e-4. Worked by hand. */
static void test_parts(void)
{
    char dir[] = "/tmp/hx_score_unit_XXXXXX", path[256], man[4096], res[1024];
    if (!mkdtemp(dir)) {
        CHECK(!"mkdtemp");
        return;
    }
    double one[8], zero[8] = {0}, off[8], small[8];
    for (int i = 0; i < 8; i++) one[i] = 1, off[i] = 1.001, small[i] = 5e-4;
    snprintf(path, sizeof path, "%s/cube.h5", dir);
    hid_t f = H5Fcreate(path, H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
    CHECK(f >= 0 && write_set(f, "/sx", one) && write_set(f, "/sy", zero) && write_set(f, "/sz", zero));
    if (f >= 0) H5Fclose(f);
    snprintf(path, sizeof path, "%s/tool.h5", dir);
    f = H5Fcreate(path, H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
    CHECK(f >= 0 && write_set(f, "/x", off) && write_set(f, "/y", zero) && write_set(f, "/z", zero) &&
          write_set(f, "/cz", small));
    if (f >= 0) H5Fclose(f);
    hsize_t d2[3] = {2, 2, 1};
    hid_t sp = H5Screate_simple(3, d2, NULL);
    f = H5Fopen(path, H5F_ACC_RDWR, H5P_DEFAULT);
    hid_t ds = H5Dcreate2(f, "/thin", H5T_IEEE_F64LE, sp, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Dwrite(ds, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, zero);
    H5Dclose(ds), H5Sclose(sp), H5Fclose(f);
    snprintf(man, sizeof man,
             "{\"suite_version\": 1, \"cubes\": [{\"name\": \"p\", \"category\": \"pure\", \"file\": \"cube.h5\","
             " \"answer\": {\"compressive_share\": 0}, \"parts\": {\"solenoidal\": [\"/sx\", \"/sy\", \"/sz\"],"
             " \"compressive\": \"zero\"}, \"tolerance\": {\"compressive_share\": 1e-9, \"shells_relative\": 1e-9,"
             " \"parts_rms_relative\": 7e-4}}]}");
    char mpath[300], rpath[300];
    snprintf(mpath, sizeof mpath, "%s/manifest.json", dir);
    snprintf(rpath, sizeof rpath, "%s/results.json", dir);
    hx_scorecard sc;
    snprintf(res, sizeof res, "{\"p\": {\"compressive_share\": 0, \"parts\": {\"solenoidal\": [\"tool.h5:/x\", \"tool.h5:/y\","
                              " \"tool.h5:/z\"], \"compressive\": [\"tool.h5:/y\", \"tool.h5:/y\", \"tool.h5:/cz\"]}}}");
    CHECK(hx_score_grade(man, mpath, res, rpath, NULL, &sc) == HX_OK);
    CHECK(sc.n == 1 && sc.cases[0].has_parts);
    CHECK_CLOSE(sc.cases[0].field_rms, 1, 1e-15);
    CHECK_CLOSE(sc.cases[0].parts_error[0], 1e-3, 1e-12);
    CHECK_CLOSE(sc.cases[0].parts_error[1], 5e-4, 1e-12);
    CHECK(!sc.cases[0].parts_passed[0] && sc.cases[0].parts_passed[1] && !sc.passed);
    CHECK(sc.cat[0].failed_parts == 1);
    /* --json holds the same verdicts and numbers */
    char jpath[300];
    snprintf(jpath, sizeof jpath, "%s/score.json", dir);
    CHECK(hx_score_json(jpath, &sc) == HX_OK);
    FILE *fp = fopen(jpath, "r");
    char buf[8192] = {0};
    size_t nread = fp ? fread(buf, 1, sizeof buf - 1, fp) : 0;
    if (fp) fclose(fp);
    cJSON *js = nread ? cJSON_Parse(buf) : NULL;
    cJSON *c0 = js ? cJSON_GetArrayItem(cJSON_GetObjectItem(js, "cases"), 0) : NULL;
    cJSON *sol = c0 ? cJSON_GetObjectItem(cJSON_GetObjectItem(c0, "parts"), "solenoidal") : NULL;
    CHECK(c0 && cJSON_IsFalse(cJSON_GetObjectItem(c0, "passed")) && cJSON_IsFalse(cJSON_GetObjectItem(js, "passed")));
    CHECK(sol && fabs(cJSON_GetObjectItem(sol, "error")->valuedouble - 1e-3) < 1e-12);
    cJSON_Delete(js);
    /* the page renders to PNG; another extension is refused */
    char png[300];
    snprintf(png, sizeof png, "%s/score.png", dir);
    CHECK(hx_score_plot(&sc, png) == HX_OK);
    fp = fopen(png, "rb");
    unsigned char sig[8] = {0};
    CHECK(fp && fread(sig, 1, 8, fp) == 8 && !memcmp(sig, "\x89PNG\r\n\x1a\n", 8));
    if (fp) fclose(fp);
    snprintf(png, sizeof png, "%s/score.svg", dir);
    CHECK(hx_score_plot(&sc, png) == HX_ERR_ARG);
    hx_score_clear(&sc);
    /* a missing dataset, a shape that differs, a missing file */
    snprintf(res, sizeof res, "{\"p\": {\"compressive_share\": 0, \"parts\": {\"solenoidal\": [\"tool.h5:/x\", \"tool.h5:/nope\","
                              " \"tool.h5:/z\"], \"compressive\": \"zero\"}}}");
    CHECK(hx_score_grade(man, mpath, res, rpath, NULL, &sc) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "cube 'p': parts.solenoidal[1]");
    CHECK_STR_CONTAINS(hx_error_message(), "no dataset /nope");
    snprintf(res, sizeof res, "{\"p\": {\"compressive_share\": 0, \"parts\": {\"solenoidal\": [\"tool.h5:/thin\", \"tool.h5:/y\","
                              " \"tool.h5:/z\"], \"compressive\": \"zero\"}}}");
    CHECK(hx_score_grade(man, mpath, res, rpath, NULL, &sc) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "has shape (2, 2, 1); the answer's is (2, 2, 2)");
    snprintf(res, sizeof res, "{\"p\": {\"compressive_share\": 0, \"parts\": {\"solenoidal\": [\"gone.h5:/x\", \"tool.h5:/y\","
                              " \"tool.h5:/z\"], \"compressive\": \"zero\"}}}");
    CHECK(hx_score_grade(man, mpath, res, rpath, NULL, &sc) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "cannot read the file");
    /* parts given for a variant or a cube without answer parts are noted, not graded */
    const char *noparts = "{\"suite_version\": 1, \"cubes\": [{\"name\": \"p\", \"category\": \"pure\", \"file\": \"cube.h5\","
                          " \"answer\": {\"compressive_share\": 0}, \"parts\": null, \"tolerance\": {\"compressive_share\": 1e-9}}]}";
    snprintf(res, sizeof res, "{\"p\": {\"compressive_share\": 0, \"parts\": {\"solenoidal\": \"zero\", \"compressive\": \"zero\"}}}");
    CHECK(hx_score_grade(noparts, mpath, res, rpath, NULL, &sc) == HX_OK);
    CHECK(sc.passed && !sc.cases[0].has_parts);
    CHECK_STR_CONTAINS(sc.cases[0].note, "parts not graded");
    hx_score_clear(&sc);
    if (getenv("HX_TEST_KEEP")) printf("kept %s\n", dir);
    else {
        const char *files[] = {"cube.h5", "tool.h5", "score.json", "score.png"};
        for (int i = 0; i < 4; i++) snprintf(path, sizeof path, "%s/%s", dir, files[i]), remove(path);
        rmdir(dir);
    }
}

/* Categories come in the contract's order whatever the manifest's order, unknown ones after. */
static void test_categories(void)
{
    const char *m = "{\"suite_version\": 1, \"cubes\": ["
                    "{\"name\": \"n1\", \"category\": \"noise\", \"file\": \"1.h5\", \"answer\": {\"compressive_share\": 0.5},"
                    " \"tolerance\": {\"compressive_share\": 0.1}},"
                    "{\"name\": \"w1\", \"category\": \"weird\", \"file\": \"2.h5\", \"answer\": {\"compressive_share\": 0.5},"
                    " \"tolerance\": {\"compressive_share\": 0.1}},"
                    "{\"name\": \"p1\", \"category\": \"pure\", \"file\": \"3.h5\", \"answer\": {\"compressive_share\": 1},"
                    " \"tolerance\": {\"compressive_share\": 0.1}},"
                    "{\"name\": \"n2\", \"category\": \"noise\", \"file\": \"4.h5\", \"answer\": {\"compressive_share\": 0.5},"
                    " \"tolerance\": {\"compressive_share\": 0.1}}]}";
    const char *r = "{\"n1\": {\"compressive_share\": 0.5}, \"w1\": {\"compressive_share\": 0.5},"
                    " \"p1\": {\"compressive_share\": 1}, \"n2\": {\"compressive_share\": 0.9}}";
    hx_scorecard sc;
    CHECK(grade(m, r, &sc) == HX_OK);
    CHECK(sc.ncat == 3 && !strcmp(sc.cat[0].name, "pure") && !strcmp(sc.cat[1].name, "noise") && !strcmp(sc.cat[2].name, "weird"));
    CHECK(sc.cat[1].cubes == 2 && sc.cat[1].failed == 1 && sc.cat[1].failed_share == 1 && sc.cat[0].failed == 0);
    CHECK(!sc.passed && sc.n_passed == 3);
    hx_score_clear(&sc);
    hx_score_clear(NULL); /* accepted */
}

int main(void)
{
    H5Eset_auto2(H5E_DEFAULT, NULL, NULL); /* the failures below are expected; helmix words them */
    test_exact_and_tolerance();
    test_shells();
    test_variants_and_inspect();
    test_malformed();
    test_parts();
    test_categories();
    return hx_test_finish();
}
