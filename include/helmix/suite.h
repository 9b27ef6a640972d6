/* helmix/suite.h — the known-answer suite, for people who test decomposition tools: cubes whose
 * Helmholtz decomposition is known exactly (pure, mixed, rising share, textbook flows, bulk flow,
 * foreign layouts, noise, a resolution ladder, a mass-weighted field) and DIR/manifest.json with
 * each cube's answer: inspect's analysis of the stored values, taken on one rank. */
#ifndef HELMIX_SUITE_H
#define HELMIX_SUITE_H

#include <mpi.h>

#include "helmix/error.h"
#include "helmix/log.h"

#define HX_SUITE_VERSION 1

typedef struct hx_suite_opts {
    const char *dir;  /* output directory, created if missing                                  */
    int cells;        /* N: a multiple of 8, at least 16; 0 means 64, or 32 with quick          */
    int ranks_hint;   /* P >= 1, the rank count the tools under test will use: the non-cubic
                       * cube gets a z size P does not divide (P >= 3), so slabs are uneven      */
    int quick;        /* small cubes for tests: N = 32 unless cells is given                     */
    int force;        /* replace an existing manifest and cubes                                 */
} hx_suite_opts;

typedef struct hx_suite_result {
    int cubes;        /* cubes written and stated in the manifest */
    int cells;        /* the N used                                */
    double seconds;
} hx_suite_result;

/* Collective: write the suite into o->dir. HX_ERR_ARG for bad options; HX_ERR_EXISTS when force
 * is 0 and DIR/manifest.json exists (nothing is written) or a cube about to be written exists. A
 * failure on any rank ends every rank with the same status; cubes already renamed into place stay,
 * the manifest is not written. res may be NULL. The answers are computed on rank 0 alone (a
 * one-rank communicator split from comm), so the same stored values give the same answer, bit for
 * bit, whatever the rank count; rank 0 then holds two complex N^3 slabs. What the suite writes
 * itself does not depend on the rank count; cubes written by make may differ between rank counts
 * in the last bits, through the sums make reduces over ranks. */
hx_status hx_suite_run(const hx_suite_opts *o, const hx_log *log, MPI_Comm comm, hx_suite_result *res);

#endif
