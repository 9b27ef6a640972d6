/* helmix/score.h — grading another decomposition tool's answers against a helmix suite
 * manifest (`helmix score`): the compressive share, the shell spectra and the real-space parts
 * of every cube, each against the manifest's answer and tolerance, summed up by category.
 * Serial: one rank reads both JSON documents and the HDF5 datasets of the parts. */
#ifndef HELMIX_SCORE_H
#define HELMIX_SCORE_H

#include <stdio.h>

#include "helmix/error.h"
#include "helmix/log.h"

/* The manifest version this grader reads (the "suite_version" key). */
#define HX_SCORE_SUITE_VERSION 1
/* Shells whose answer energy e_comp + e_sol is at most this share of the largest are not
 * graded: they hold round-off, and a relative error of round-off means nothing. */
#define HX_SCORE_SHELL_FLOOR 1e-12

enum { HX_SCORE_NAME = 96, HX_SCORE_CATEGORY = 32, HX_SCORE_MAX_CATEGORIES = 24, HX_SCORE_NOTE = 200 };

/* The shells of one cube, graded (only those above the floor). Errors are relative to the
 * answer's energy of the shell, E_s = e_comp + e_sol, so a part that is empty in a shell (a
 * pure cube) is held to the same standard as the rest instead of to 0/0:
 *   err_comp[i] = (got_comp − ans_comp) / E_s,  err_sol[i] = (got_sol − ans_sol) / E_s. */
typedef struct hx_score_shells {
    int n;
    double *k, *energy;              /* wavenumber and E_s of each graded shell        */
    double *ans_comp, *ans_sol;      /* the answer                                     */
    double *got_comp, *got_sol;      /* the tool's values                              */
    double *err_comp, *err_sol;      /* relative errors as above                       */
    double max_error, max_k;         /* largest |error| of either part and its shell   */
    double tolerance;                /* the manifest's tolerance.shells_relative       */
    int passed;
} hx_score_shells;

/* One cube of the manifest, graded. */
typedef struct hx_score_case {
    char name[HX_SCORE_NAME], category[HX_SCORE_CATEGORY];
    char variant[HX_SCORE_NAME];     /* "" : the main answer                            */
    int from_inspect;                /* 1: the value was a `helmix inspect --json` document */
    /* the compressive share: error = measured − answer, passes when |error| <= tolerance */
    double answer, measured, error, tolerance;
    int share_passed;
    int has_shells;
    hx_score_shells shells;
    /* the real-space parts (0 solenoidal, 1 compressive): rms of (tool − answer) over the
     * cells, the three components together, divided by field_rms, the rms of the field the
     * answer's parts add up to (the decomposed field less its mean); the rms of each part
     * of the answer and of the tool, for the table */
    int has_parts;
    double parts_error[2], field_rms, parts_tolerance;
    double parts_answer_rms[2], parts_measured_rms[2];
    int parts_passed[2];
    /* a resolution ladder's step (ladder = 0 when the cube belongs to none) */
    int ladder, ladder_level;
    double ladder_cells;
    char ladder_group[HX_SCORE_CATEGORY];
    char note[HX_SCORE_NOTE];        /* what was given but not graded, "" if nothing   */
    int passed;                      /* every graded check of the cube passed           */
} hx_score_case;

/* The cubes of one category and which kinds of check failed in them. */
typedef struct hx_score_category {
    char name[HX_SCORE_CATEGORY];
    int cubes, passed, failed;
    int failed_share, failed_shells, failed_parts; /* cubes failing each kind of check */
} hx_score_category;

typedef struct hx_scorecard {
    char suite[128], suite_helmix_version[48];
    int suite_version;
    char manifest[512], results[512]; /* the paths graded, for titles and the JSON       */
    int n, n_passed, passed;
    hx_score_case *cases;            /* in the manifest's order                         */
    int ncat;                        /* categories in a fixed order: pure, mix, analytic,
                                      * bulk, layout, noise, ladder, density, then any other
                                      * in the order the manifest names them            */
    hx_score_category cat[HX_SCORE_MAX_CATEGORIES];
} hx_scorecard;

/* Grade the results text against the manifest text. The paths name the documents in
 * messages, and their directories are where relative file names inside them start (the
 * manifest's cube files, the results' part files); the files themselves are not read here
 * except the HDF5 files of parts. log may be NULL. Not collective.
 *
 * RESULTS is a JSON object mapping every cube name of the manifest to either
 *   {"compressive_share": x, "shells": [{"k": s, "e_comp": .., "e_sol": ..}, ...],
 *    "parts": {"solenoidal": [3 "file.h5:/dataset"] or "zero", "compressive": ...},
 *    "variant": "name"}                       (only compressive_share is required), or
 *   the document `helmix inspect --json` writes (it has "helmix_version"): the share is
 *   energy.compressive_fraction, the shells shells.k / .compressive / .solenoidal, and a
 *   remove_scale > 0 selects the variant with that remove_scale.
 *
 * Errors (HX_ERR_ARG, one line naming the document, the cube and the key): either text is
 * not JSON or not an object; the manifest's suite_version is not HX_SCORE_SUITE_VERSION or a
 * key it must hold is missing or of the wrong type; a cube of the manifest is missing from
 * RESULTS or RESULTS names one the manifest lacks (or one twice); a non-number where a number
 * belongs; an unknown variant; a shell with energy in the answer that the results lack; a
 * part file or dataset that cannot be read or whose shape differs from the answer's.
 * HX_ERR_HDF5 / HX_ERR_MEM for failures of the library or the machine. On error sc is empty. */
hx_status hx_score_grade(const char *manifest_text, const char *manifest_path, const char *results_text,
                         const char *results_path, const hx_log *log, hx_scorecard *sc);

/* Read both files and grade them (HX_ERR_ARG naming a file that cannot be read). */
hx_status hx_score_files(const char *manifest_path, const char *results_path, const hx_log *log, hx_scorecard *sc);

/* Free what sc holds and zero it. Accepts NULL. */
void hx_score_clear(hx_scorecard *sc);

/* The scorecard table (cube, category, check, answer, measured, error, tolerance, verdict),
 * the summary by category and the overall verdict. */
void hx_score_print(FILE *out, const hx_scorecard *sc);

/* Every number of sc as JSON (undefined numbers as null). HX_ERR_IO if it cannot be written. */
hx_status hx_score_json(const char *path, const hx_scorecard *sc);

/* The scorecard page, PNG (1800x1300) or PDF (one landscape page) by the extension: errors
 * per case over tolerance by category, the shells of the cube with the largest shell error,
 * and the share error along each resolution ladder. HX_ERR_ARG for another extension,
 * HX_ERR_IO when cairo cannot write. Not collective. */
hx_status hx_score_plot(const hx_scorecard *sc, const char *path);

#endif
