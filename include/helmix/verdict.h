/* helmix/verdict.h — asked, target and measured: the table behind `helmix inspect --check`.
 *
 * A request comes from the /helmix group of a helmix file (what make was asked and what it
 * recorded) or from --expect on the command line. Each line keeps apart what was asked (the
 * recipe or --expect; nothing for a derived line such as the zero mean), the target the
 * measured value is held to (the asked value, or what follows from it for this file: the share
 * this draw holds, the slope the compensated fit gives on this grid and band, the state as
 * make measured it) and the tolerance, chosen from the precision of the data and, for
 * statistical quantities, from the scatter a Gaussian draw allows. Pure functions, not
 * collective. */
#ifndef HELMIX_VERDICT_H
#define HELMIX_VERDICT_H

#include <stdio.h>

#include "helmix/diag.h"

typedef struct hx_request {
    int has_vrms, has_fraction, has_slope, has_shell_fraction, has_recorded;
    double vrms, fraction, slope;   /* requested values; for helmix files slope is what the
                                     * compensated fit should give on that grid and band     */
    double slope_recipe;            /* the recipe's slope, shown as asked (NAN: none)      */
    double recorded_fraction;       /* share make says it wrote (free draws)              */
    double expected_fraction;       /* the share asked of the ensemble (for zeta, (1-zeta)^2 /
                                     * (1-2 zeta+3 zeta^2)), shown as asked (NAN: none)  */
    double tol_vrms, tol_fraction, tol_slope; /* vrms tolerance is relative; NAN: the line
                                               * is information only                      */
    double fit_kmin, fit_kmax;      /* band of the request, for the slope fit (0: none)    */
    int single;                     /* data stored in single precision                    */
    int zero_mean;                  /* 1: the field is a synthesis whose mean vanishes; 0: it
                                     * was shaped afterwards (window, bulk removal, weighting) */
    /* the state in a density (a helmix file's /helmix/state): the asked value where one was
     * asked (asked_* = 1), else the value make measured on what it wrote; NAN: not judged */
    double sigma_3d, mach, virial, sigma_s, density_mean;
    int asked_sigma_3d, asked_mach, asked_virial, asked_sigma_s;
    double momentum_rel;            /* |P| / (M vrms): 0 when make removed the bulk flow    */
    int momentum_removed;
    double tol_state;               /* relative; for sigma_s absolute, times max(1, sigma_s) */
    double tol_momentum;            /* absolute, on |P| / (M vrms)                          */
    /* the magnetic field make recorded (/helmix/state; has_magnetic = 0: none): the uniform
     * field B0 and the asked rms of the random part; beta and the Alfven Mach number of B0,
     * asked (asked_* = 1) else as made (NAN: not judged) */
    int has_magnetic;
    double b0[3], b_random_rms, beta, alfven_mach;
    int asked_beta, asked_alfven_mach;
    double tol_magnetic;            /* relative: of |B0| for the mean field (of the rms |B| when
                                     * B0 = 0), of the random rms, of beta and M_A            */
    double tol_divergence;          /* absolute, on the spectral and the face divergence ratios */
} hx_request;

#define HX_VERDICT_MAX 32

typedef struct hx_verdict_line {
    char quantity[48];
    double asked;      /* what the recipe or --expect asked of it; NAN: nothing (a derived line) */
    double target;     /* what the measured value is held to                                   */
    double measured, tolerance; /* tolerance NAN: information only, no verdict                */
    char basis[32];    /* where the target comes from: "asked", "this draw", "fit on this grid",
                        * "as made", "as written", "zero-mean synthesis", ...                    */
    int passed;
} hx_verdict_line;

typedef struct hx_verdict {
    int n, passed;
    hx_verdict_line line[HX_VERDICT_MAX];
} hx_verdict;

/* Default tolerances for data of the given precision (single = 1) and amplitude kind. */
void hx_request_defaults(hx_request *q, int single, int fixed_amplitudes);

/* Parse "fraction=0.3,slope=2,vrms=1" (--expect) or the same keys for --tolerance into q.
 * HX_ERR_ARG naming the option, the key and what is allowed. */
hx_status hx_request_parse(hx_request *q, const char *text, int tolerances, const char *option);

/* Judge d against q. The magnetic lines (mean B_x|y|z, the random rms, beta, M_A, the spectral
 * divergence and, with a face-centred field, the face divergence) need q->has_magnetic and a
 * magnetic field analysed in d. */
void hx_verdict_judge(const hx_request *q, const hx_diag *d, hx_verdict *v);

/* Print the table (check, asked, target, measured, tolerance, verdict, target is) with
 * PASS/FAIL per line ("-" where nothing was asked) and the overall verdict. */
void hx_verdict_print(const hx_verdict *v, FILE *out);

#endif
