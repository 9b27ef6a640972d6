/* cmd_inspect.c — `helmix inspect`: options, the analysis (of the velocity and, when the file
 * holds one or --magnetic names one, of the magnetic field), then the table, the files asked
 * for and, with --check, the verdict that decides the exit status (0 pass, 1 fail). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "helmix/inspect.h"
#include "helmix/plot.h"
#include "helmix/report.h"

static void inspect_usage(FILE *out)
{
    fprintf(out,
            "usage: mpiexec -n P helmix inspect FILE [options]\n\n"
            "Measure what a velocity cube holds: mean and rms, kinetic energy in compressive and\n"
            "solenoidal modes, shell spectra, slope, rms divergence and vorticity, one-point PDFs.\n"
            "With a density also its state: mass-weighted 3D dispersion sigma_3D, Mach number,\n"
            "virial parameter 5 sigma_1D^2 R / (G M) (Bertoldi & McKee 1992), mean and sigma_s of\n"
            "ln rho, net momentum. With a magnetic field its rms and mean, beta and Alfven Mach\n"
            "number of the mean field, magnetic energy spectrum and slope, and its divergence\n"
            "(spectral, and discrete on a face-centred field). Reads helmix files and any HDF5 cube.\n\n"
            "input:\n"
            "  --vector PX,PY,PZ       three 3-D datasets holding vx, vy, vz\n"
            "  --vector P              one 4-D dataset with a component axis of length 3 (first or last)\n"
            "                          (default: the helmix layout /data/grid_0000000000/velocity_x|y|z)\n"
            "  --order zyx|xyz         axis order of the datasets: zyx (default) = (Nz, Ny, Nx), x fastest;\n"
            "                          xyz = (Nx, Ny, Nz), z fastest\n"
            "  --box Lx,Ly,Lz          box size when the file does not record it (default 1,1,1)\n"
            "  --density PATH          mass weighting: decompose sqrt(rho) v (common practice for\n"
            "                          compressible turbulence), PATH a 3-D dataset of the same shape;\n"
            "                          also reports the state. A helmix file with a density reports\n"
            "                          its state without it, and decomposes sqrt(rho) v by itself when\n"
            "                          its mix was asked for sqrt(rho) v ([mix] weight = mass)\n"
            "  --magnetic PX,PY,PZ     cell-centred magnetic field (three 3-D datasets, or one 4-D\n"
            "                          dataset P), code magnetic units: v_A = B / sqrt(rho)\n"
            "                          (default: a helmix file's magnetic_x|y|z when it has them)\n"
            "  --magnetic-face PX,PY,PZ  the same field on a staggered grid: component c on the\n"
            "                          low-c face of each cell (x_c = i dx_c, the other coordinates\n"
            "                          at cell centres); its discrete divergence is reported\n"
            "                          (default: a helmix file's magnetic_face_x|y|z); needs --magnetic\n"
            "state (with a density; a magnetic field's beta needs only the sound speed):\n"
            "  --sound-speed CS        sound speed in code velocity for the Mach number sigma_3D / CS\n"
            "                          and the plasma beta\n"
            "                          (default: the one a helmix file records; none for other files)\n"
            "  --gravity G             gravitational constant in code units for the virial parameter\n"
            "                          (default: a helmix file's; none for other files). The region is\n"
            "                          a helmix file's cloud, else the whole box with R = max(L)/2\n"
            "  --gamma G               adiabatic index for the plasma beta, P = <rho> c_s^2 / G\n"
            "                          (default: a helmix file's; else 1, c_s isothermal)\n"
            "analysis:\n"
            "  --remove-scale L        subtract the flow smoothed with a Gaussian of width L (code\n"
            "                          length) first, so bulk motions on scales above L are not counted\n"
            "  --fit KMIN,KMAX         shells of the slope fit (default: the recorded band, else [2, N/4];\n"
            "                          for the magnetic spectrum [2, N/4] ended at its last shell\n"
            "                          above 1e-10 of the largest)\n"
            "verdict:\n"
            "  --check                 compare with the request recorded in the file's /helmix group\n"
            "                          and its state (/helmix/state: the asked Mach number, virial\n"
            "                          parameter, sigma_3D or sigma_s, else the values make measured;\n"
            "                          zero net momentum when make removed the bulk flow; the\n"
            "                          magnetic field's mean, random rms, beta and Alfven Mach number\n"
            "                          and zero divergence when make wrote one), or with\n"
            "                          --expect; exit 0 if every line passes, 1 if not\n"
            "  --expect KEY=V,...      what the cube should hold, any subset of fraction, slope, vrms,\n"
            "                          mach, virial, sigma_s (the state in a density), beta,\n"
            "                          alfven_mach (the mean magnetic field)\n"
            "  --tolerance KEY=T,...   tolerances: fraction, slope, vrms (relative), state (relative),\n"
            "                          magnetic (relative), divergence; with --expect the defaults are\n"
            "                          1 %% (0.01) for fraction, vrms, state and magnetic, 0.15 for slope\n"
            "output:\n"
            "  --json FILE             every number as JSON\n"
            "  --csv FILE              per-shell table\n"
            "  --plot FILE.png|.pdf    one report page\n"
            "  --timings FILE.json     wall time, bytes read and transforms per phase (open, plan, read,\n"
            "                          moments, transform, accumulate, slices, finish, report), min/mean/max\n"
            "                          over the ranks, and peak memory per rank (docs/timings.schema.json)\n"
            "  --quiet                 no progress lines\n");
}

typedef struct {
    hx_inspect_opts o;
    const char *json, *csv, *plot, *expect, *tolerance, *timings;
    int check, help, verbosity;
} inspect_args;

static hx_status numbers(const char *opt, const char *text, double *v, int n)
{
    char buf[256];
    snprintf(buf, sizeof buf, "%s", text);
    char *save = NULL, *tok = strtok_r(buf, ",", &save);
    for (int i = 0; i < n; i++, tok = strtok_r(NULL, ",", &save)) {
        char *end = NULL;
        if (!tok || (v[i] = strtod(tok, &end), end == tok || *end) || !isfinite(v[i]))
            return hx_error_set(HX_ERR_ARG, "%s %s: need %d comma-separated number%s", opt, text, n, n > 1 ? "s" : "");
    }
    if (tok) return hx_error_set(HX_ERR_ARG, "%s %s: need %d comma-separated number%s", opt, text, n, n > 1 ? "s" : "");
    return HX_OK;
}

static hx_status option_value(hx_inspect_opts *o, inspect_args *a, const char *opt, const char *val)
{
    if (!strcmp(opt, "--vector")) o->cube.vector = val;
    else if (!strcmp(opt, "--magnetic")) o->cube.magnetic = val;
    else if (!strcmp(opt, "--magnetic-face")) o->cube.magnetic_face = val;
    else if (!strcmp(opt, "--density")) o->cube.density = val;
    else if (!strcmp(opt, "--json")) a->json = val;
    else if (!strcmp(opt, "--csv")) a->csv = val;
    else if (!strcmp(opt, "--plot")) a->plot = val;
    else if (!strcmp(opt, "--timings")) a->timings = val;
    else if (!strcmp(opt, "--expect")) a->expect = val;
    else if (!strcmp(opt, "--tolerance")) a->tolerance = val;
    else if (!strcmp(opt, "--order")) {
        if (!strcmp(val, "zyx")) o->cube.order = HX_ORDER_ZYX;
        else if (!strcmp(val, "xyz")) o->cube.order = HX_ORDER_XYZ;
        else return hx_error_set(HX_ERR_ARG, "--order %s: must be zyx or xyz", val);
    } else if (!strcmp(opt, "--box")) {
        hx_status st = numbers(opt, val, o->cube.box, 3);
        if (st != HX_OK) return st;
        for (int i = 0; i < 3; i++)
            if (!(o->cube.box[i] > 0)) return hx_error_set(HX_ERR_ARG, "--box %s: every side must be > 0", val);
        o->cube.has_box = 1;
    } else if (!strcmp(opt, "--remove-scale")) {
        hx_status st = numbers(opt, val, &o->remove_scale, 1);
        if (st != HX_OK) return st;
        if (!(o->remove_scale > 0)) return hx_error_set(HX_ERR_ARG, "--remove-scale %s: must be a length > 0", val);
    } else if (!strcmp(opt, "--sound-speed") || !strcmp(opt, "--gravity") || !strcmp(opt, "--gamma")) {
        double *dst = opt[2] == 's' ? &o->sound_speed : !strcmp(opt, "--gamma") ? &o->gamma : &o->gravity;
        hx_status st = numbers(opt, val, dst, 1);
        if (st != HX_OK) return st;
        if (!(*dst > 0))
            return hx_error_set(HX_ERR_ARG, "%s %s: must be a number > 0%s", opt, val, dst == &o->gamma ? "" : " (code units)");
    } else if (!strcmp(opt, "--fit")) {
        hx_status st = numbers(opt, val, o->fit, 2);
        if (st != HX_OK) return st;
        if (!(o->fit[0] >= 1 && o->fit[1] > o->fit[0]))
            return hx_error_set(HX_ERR_ARG, "--fit %s: need 1 <= KMIN < KMAX (shells)", val);
    } else
        return hx_error_set(HX_ERR_ARG, "unknown option '%s' (see helmix inspect --help)", opt);
    return HX_OK;
}

static hx_status parse_args(int argc, char **argv, inspect_args *a)
{
    a->verbosity = HX_LOG_INFO;
    for (int i = 0; i < argc; i++) {
        const char *s = argv[i];
        if (!strcmp(s, "-h") || !strcmp(s, "--help")) a->help = 1;
        else if (!strcmp(s, "--check")) a->check = 1;
        else if (!strcmp(s, "--quiet") || !strcmp(s, "-q")) a->verbosity = HX_LOG_QUIET;
        else if (!strncmp(s, "--", 2)) {
            const char *eq = strchr(s, '=');
            char opt[64];
            const char *val;
            if (eq) {
                snprintf(opt, sizeof opt, "%.*s", (int)(eq - s), s);
                val = eq + 1;
            } else {
                snprintf(opt, sizeof opt, "%s", s);
                if (i + 1 >= argc) return hx_error_set(HX_ERR_ARG, "option %s needs a value", s);
                val = argv[++i];
            }
            hx_status st = option_value(&a->o, a, opt, val);
            if (st != HX_OK) return st;
        } else if (s[0] == '-' && s[1]) return hx_error_set(HX_ERR_ARG, "unknown option '%s' (see helmix inspect --help)", s);
        else if (a->o.cube.file) return hx_error_set(HX_ERR_ARG, "more than one file given ('%s' and '%s')", a->o.cube.file, s);
        else a->o.cube.file = s;
    }
    if (!a->help && !a->o.cube.file) return hx_error_set(HX_ERR_ARG, "no file given (helmix inspect --help)");
    if (a->o.cube.magnetic_face && !a->o.cube.magnetic)
        return hx_error_set(HX_ERR_ARG, "--magnetic-face %s: name the cell-centred field with --magnetic too",
                            a->o.cube.magnetic_face);
    a->o.cube.find_magnetic = 1;
    if (a->plot) {
        const char *dot = strrchr(a->plot, '.');
        if (!dot || (strcasecmp(dot, ".png") && strcasecmp(dot, ".pdf")))
            return hx_error_set(HX_ERR_ARG, "--plot %s: the file name must end in .png or .pdf", a->plot);
    }
    a->o.slices = a->plot != NULL;
    return HX_OK;
}

/* Rank 0: table, verdict, files. Returns the status of writing the files. */
static hx_status outputs(const inspect_args *a, const hx_diag *d, const hx_request *q, const hx_verdict *v)
{
    hx_status st = HX_OK;
    hx_report_print(stdout, d, a->o.cube.file);
    if (a->check) hx_verdict_print(v, stdout);
    fflush(stdout);
    if (a->json && st == HX_OK) st = hx_report_json(a->json, d, a->check ? v : NULL, a->o.cube.file);
    if (a->csv && st == HX_OK) st = hx_report_csv(a->csv, d);
    if (a->plot && st == HX_OK) {
        /* the page shows grid and version under the title already */
        double guide = isfinite(q->slope_recipe) ? q->slope_recipe : q->slope; /* the recipe's index, not the fit's expectation */
        hx_plot_request pr = {q->has_slope ? guide : NAN, q->has_fraction ? q->fraction : NAN, a->o.cube.file};
        st = hx_plot_report(d, &pr, a->plot);
    }
    return st;
}

int hx_cmd_inspect(int argc, char **argv, MPI_Comm comm, int rank)
{
    inspect_args a;
    memset(&a, 0, sizeof a);
    hx_status st = parse_args(argc, argv, &a);
    if (st == HX_OK && a.help) {
        if (rank == 0) inspect_usage(stdout);
        return HX_EXIT_OK;
    }
    if (st != HX_OK) return hx_cli_fail(st, rank);
    hx_timer *timer = NULL;
    if (a.timings) { /* a missing directory is refused before any work */
        st = hx_timer_check_path(a.timings, comm);
        if (st == HX_OK) st = hx_error_agree(comm, hx_timer_create(&timer, "inspect"));
        if (st != HX_OK) return hx_cli_fail(st, rank);
        hx_timer_note_text(timer, "file", a.o.cube.file);
        hx_timer_note(timer, "threads", 1); /* inspect runs one thread per rank */
        a.o.timer = timer;
    }
    hx_log log;
    hx_log_init(&log, comm, a.verbosity, stderr);
    hx_diag d;
    hx_request q;
    int found = 0;
    st = hx_inspect_run(&a.o, &log, comm, &d, &q, &found);
    if (st != HX_OK) {
        hx_timer_destroy(&timer);
        return hx_cli_fail(st, rank);
    }
    /* --expect replaces what the file recorded; --tolerance adjusts either */
    if (a.expect) {
        hx_request_defaults(&q, q.single, 0);
        q.tol_fraction = 0.01, q.tol_vrms = 0.01; /* what a user expects of a cube: 1 %, not round-off */
        q.tol_state = 0.01, q.tol_magnetic = 0.01;
        st = hx_request_parse(&q, a.expect, 0, "--expect");
    }
    if (st == HX_OK && a.tolerance) st = hx_request_parse(&q, a.tolerance, 1, "--tolerance");
    hx_verdict v;
    hx_verdict_judge(&q, &d, &v);
    if (st == HX_OK && a.check && v.n == 0 && a.expect)
        st = hx_error_set(HX_ERR_ARG, "--expect %s: nothing asked for was measured in %s (mach, virial and sigma_s need a "
                                      "density: --density PATH; beta and alfven_mach a magnetic field: --magnetic)",
                          a.expect, a.o.cube.file);
    else if (st == HX_OK && a.check && v.n == 0)
        st = hx_error_set(HX_ERR_ARG, "--check: %s records no request; say what to expect with --expect", a.o.cube.file);
    hx_timer_begin(timer, "report");
    if (st == HX_OK && rank == 0) st = outputs(&a, &d, &q, &v);
    st = hx_error_agree(comm, st);
    hx_timer_end(timer, "report", 0, 0);
    if (st == HX_OK && timer) st = hx_timer_write(timer, a.timings, comm);
    hx_timer_destroy(&timer);
    hx_diag_clear(&d);
    if (st != HX_OK) return hx_cli_fail(st, rank);
    return a.check && !v.passed ? HX_EXIT_CHECK : HX_EXIT_OK;
}
