/* cmd_inspect.c — `helmix inspect`: options, the analysis (of the velocity and, when the file
 * holds one or --magnetic names one, of the magnetic field), then the table, the files asked
 * for and, with --check, the verdict that decides the exit status (0 pass, 1 fail). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "cli.h"
#include "options.h"
#include "helmix/fft.h"
#include "helmix/inspect.h"
#include "helmix/io.h"
#include "helmix/plot.h"
#include "helmix/report.h"

enum {
    O_VECTOR, O_ORDER, O_BOX, O_DENSITY, O_MAGNETIC, O_MAGNETIC_FACE, O_SOUND_SPEED, O_GRAVITY, O_GAMMA, O_REMOVE_SCALE,
    O_FIT, O_CHECK, O_VERIFY, O_EXPECT, O_TOLERANCE, O_JSON, O_CSV, O_PLOT, O_TIMINGS, O_THREADS, O_QUIET, O_VERBOSE,
    O_HELP
};

static const hx_opt inspect_options[] = {
    {"", 0, NULL, 0, 0, "input:"},
    {"vector", 0, "PX,PY,PZ", O_VECTOR, 0,
     "three 3-D datasets holding vx, vy, vz; or one name P: a 4-D\ndataset with a component axis of length 3 (first or "
     "last)\n(default: the helmix layout /data/grid_0000000000/velocity_x|y|z)"},
    {"order", 0, "zyx|xyz", O_ORDER, 0,
     "axis order of the datasets: zyx (default) = (Nz, Ny, Nx), x fastest;\nxyz = (Nx, Ny, Nz), z fastest"},
    {"box", 0, "Lx,Ly,Lz", O_BOX, 0, "box size when the file does not record it (default 1,1,1)"},
    {"density", 0, "PATH", O_DENSITY, 0,
     "mass weighting: decompose sqrt(rho) v (common practice for\ncompressible turbulence), PATH a 3-D dataset of the "
     "same shape;\nalso reports the state. A helmix file with a density reports\nits state without it, and decomposes "
     "sqrt(rho) v by itself when\nits mix was asked for sqrt(rho) v ([mix] weight = mass)"},
    {"magnetic", 0, "PX,PY,PZ", O_MAGNETIC, 0,
     "cell-centred magnetic field (three 3-D datasets, or one 4-D\ndataset P), code magnetic units: v_A = B / sqrt(rho)\n"
     "(default: a helmix file's magnetic_x|y|z when it has them)"},
    {"magnetic-face", 0, "PX,PY,PZ", O_MAGNETIC_FACE, 0,
     "the same field on a staggered grid: component c on the\nlow-c face of each cell (x_c = i dx_c, the other "
     "coordinates\nat cell centres); its discrete divergence is reported\n(default: a helmix file's "
     "magnetic_face_x|y|z); needs --magnetic"},
    {"", 0, NULL, 0, 0, "state (with a density; a magnetic field's beta needs only the sound speed):"},
    {"sound-speed", 0, "CS", O_SOUND_SPEED, 0,
     "sound speed in code velocity for the Mach number sigma_3D / CS\nand the plasma beta\n(default: the one a helmix "
     "file records; none for other files)"},
    {"gravity", 0, "G", O_GRAVITY, 0,
     "gravitational constant in code units for the virial parameter\n(default: a helmix file's; none for other files). "
     "The region is\na helmix file's cloud, else the whole box with R = max(L)/2"},
    {"gamma", 0, "G", O_GAMMA, 0,
     "adiabatic index for the plasma beta, P = <rho> c_s^2 / G\n(default: a helmix file's; else 1, c_s isothermal)"},
    {"", 0, NULL, 0, 0, "analysis:"},
    {"remove-scale", 0, "L", O_REMOVE_SCALE, 0,
     "subtract the flow smoothed with a Gaussian of width L (code\nlength) first, so bulk motions on scales above L are "
     "not counted"},
    {"fit", 0, "KMIN,KMAX", O_FIT, 0,
     "shells of the slope fit (default: the recorded band, else [2, N/4];\nfor the magnetic spectrum [2, N/4] ended at "
     "its last shell\nabove 1e-10 of the largest)"},
    {"", 0, NULL, 0, 0, "verdict:"},
    {"check", 0, NULL, O_CHECK, 0,
     "compare with the request recorded in the file's /helmix group\nand its state (/helmix/state: the asked Mach number, "
     "virial\nparameter, sigma_3D or sigma_s, else the values make measured;\nzero net momentum when make removed the "
     "bulk flow; the\nmagnetic field's mean, random rms, beta and Alfven Mach number\nand zero divergence when make "
     "wrote one), or with\n--expect; exit 0 if every line passes, 1 if not"},
    {"verify", 0, NULL, O_VERIFY, 0,
     "first recompute the checksum of every dataset of a helmix file\nand compare it with the one make stored; a "
     "dataset whose bytes\nchanged (or that lost its checksum) is named and the exit status\nis 1, with no analysis"},
    {"expect", 0, "KEY=V,...", O_EXPECT, 0,
     "what the cube should hold, any subset of fraction, slope, vrms,\nmach, virial, sigma_s (the state in a density), "
     "beta,\nalfven_mach (the mean magnetic field); implies --check"},
    {"tolerance", 0, "KEY=T,...", O_TOLERANCE, 0,
     "tolerances: fraction, slope, vrms (relative), state (relative),\nmagnetic (relative), divergence; with --expect "
     "the defaults are\n1 % (0.01) for fraction, vrms, state and magnetic, 0.15 for slope"},
    {"", 0, NULL, 0, 0, "output:"},
    {"json", 0, "FILE", O_JSON, 0, "every number as JSON"},
    {"csv", 0, "FILE", O_CSV, 0, "per-shell table"},
    {"plot", 0, "FILE.png|.pdf", O_PLOT, 0, "one report page"},
    {"timings", 0, "FILE.json", O_TIMINGS, 0,
     "wall time, bytes read and transforms per phase (open, plan, read,\nmoments, transform, accumulate, slices, "
     "finish, report), min/mean/max\nover the ranks, and peak memory per rank (docs/timings.schema.json)"},
    {"", 0, NULL, 0, 0, "running:"},
    {"threads", 0, "T", O_THREADS, 0,
     "threads per rank for FFTW and the k-space sums (default:\nOMP_NUM_THREADS, else 1); every count gives the same numbers"},
    {"quiet", 'q', NULL, O_QUIET, 0, "no progress lines"},
    {"verbose", 'v', NULL, O_VERBOSE, 0, "also the options as read: datasets, box, fit band, what --check compares"},
    {"help", 'h', NULL, O_HELP, 0, "this text"},
    {NULL, 0, NULL, 0, 0, NULL},
};

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
            "(spectral, and discrete on a face-centred field). Reads helmix files and any HDF5 cube.\n\n");
    hx_opt_help(out, inspect_options);
    fprintf(out, "\nexit status: 0 success (every --check line passes), 1 a --check line fails, 2 bad input\n"
                 "(options, files; found before any analysis), 3 run-time failure\n");
}

typedef struct {
    hx_inspect_opts o;
    const char *json, *csv, *plot, *expect, *tolerance, *timings;
    int check, verify, help, verbosity;
} inspect_args;

static hx_status numbers(const char *opt, const char *text, double *v, int n)
{
    char buf[256];
    if (strlen(text) >= sizeof buf) return hx_error_set(HX_ERR_ARG, "%s: value too long", opt);
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

/* A number > 0 for --sound-speed, --gravity, --gamma or --remove-scale. */
static hx_status positive(const char *opt, const char *val, double *dst, const char *what)
{
    hx_status st = numbers(opt, val, dst, 1);
    if (st == HX_OK && !(*dst > 0)) st = hx_error_set(HX_ERR_ARG, "%s %s: must be %s", opt, val, what);
    return st;
}

static hx_status inspect_option(void *ctx, const hx_opt *opt, const char *val)
{
    inspect_args *a = ctx;
    hx_inspect_opts *o = &a->o;
    if (!opt) {
        if (o->cube.file) return hx_error_set(HX_ERR_ARG, "more than one file given ('%s' and '%s')", o->cube.file, val);
        o->cube.file = val;
        return HX_OK;
    }
    switch (opt->id) {
    case O_VECTOR: o->cube.vector = val; break;
    case O_MAGNETIC: o->cube.magnetic = val; break;
    case O_MAGNETIC_FACE: o->cube.magnetic_face = val; break;
    case O_DENSITY: o->cube.density = val; break;
    case O_JSON: a->json = val; break;
    case O_CSV: a->csv = val; break;
    case O_PLOT: a->plot = val; break;
    case O_TIMINGS: a->timings = val; break;
    case O_EXPECT: a->expect = val; break;
    case O_TOLERANCE: a->tolerance = val; break;
    case O_CHECK: a->check = 1; break;
    case O_VERIFY: a->verify = 1; break;
    case O_QUIET: a->verbosity = HX_LOG_QUIET; break;
    case O_VERBOSE: a->verbosity = HX_LOG_DEBUG; break;
    case O_HELP: a->help = 1; break;
    case O_THREADS: return hx_opt_threads(val, &o->threads);
    case O_ORDER:
        if (!strcmp(val, "zyx")) o->cube.order = HX_ORDER_ZYX;
        else if (!strcmp(val, "xyz")) o->cube.order = HX_ORDER_XYZ;
        else return hx_error_set(HX_ERR_ARG, "--order %s: must be zyx or xyz", val);
        break;
    case O_BOX: {
        hx_status st = numbers("--box", val, o->cube.box, 3);
        if (st != HX_OK) return st;
        for (int i = 0; i < 3; i++)
            if (!(o->cube.box[i] > 0)) return hx_error_set(HX_ERR_ARG, "--box %s: every side must be > 0", val);
        o->cube.has_box = 1;
        break;
    }
    case O_REMOVE_SCALE: return positive("--remove-scale", val, &o->remove_scale, "a length > 0");
    case O_SOUND_SPEED: return positive("--sound-speed", val, &o->sound_speed, "a number > 0 (code units)");
    case O_GRAVITY: return positive("--gravity", val, &o->gravity, "a number > 0 (code units)");
    case O_GAMMA: {
        hx_status st = positive("--gamma", val, &o->gamma, "a number >= 1");
        if (st == HX_OK && !(o->gamma >= 1.0)) /* as make: an adiabatic index is at least 1 */
            st = hx_error_set(HX_ERR_ARG, "--gamma %s: the adiabatic index must be >= 1 (1 isothermal, 5/3 monatomic)", val);
        return st;
    }
    case O_FIT: {
        hx_status st = numbers("--fit", val, o->fit, 2);
        if (st != HX_OK) return st;
        if (!(o->fit[0] >= 1 && o->fit[1] > o->fit[0])) return hx_error_set(HX_ERR_ARG, "--fit %s: need 1 <= KMIN < KMAX (shells)", val);
        break;
    }
    default: break;
    }
    return HX_OK;
}

/* --expect and --tolerance as the verdict will read them, on a scratch request: a wrong key or
 * value is refused before any analysis, in the words the verdict would use. */
static hx_status check_verdict_text(const inspect_args *a)
{
    hx_request q;
    hx_request_defaults(&q, 0, 0);
    hx_status st = a->expect ? hx_request_parse(&q, a->expect, 0, "--expect") : HX_OK;
    if (st == HX_OK && a->tolerance) st = hx_request_parse(&q, a->tolerance, 1, "--tolerance");
    return st;
}

static hx_status parse_args(int argc, char **argv, inspect_args *a)
{
    a->verbosity = HX_LOG_INFO;
    hx_status st = hx_opt_parse("inspect", inspect_options, argc, argv, inspect_option, a);
    if (st != HX_OK || a->help) return st;
    if (!a->o.cube.file) return hx_error_set(HX_ERR_ARG, "no file given (helmix inspect --help)");
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
    if (a->expect) a->check = 1; /* an expectation nobody checks would let a job script's gate always pass */
    return check_verdict_text(a);
}

/* --verbose: the options as they were read, before the analysis. */
static void say_options(const hx_log *log, const inspect_args *a)
{
    if (log->verbosity < HX_LOG_DEBUG) return;
    const hx_cube_spec *c = &a->o.cube;
    hx_log_say(log, HX_LOG_DEBUG, "velocity %s, order %s, box %s", c->vector ? c->vector : "the helmix layout",
               c->order == HX_ORDER_XYZ ? "xyz" : "zyx", c->has_box ? "from --box" : "from the file, else 1,1,1");
    if (c->has_box) hx_log_say(log, HX_LOG_DEBUG, "box %g x %g x %g", c->box[0], c->box[1], c->box[2]);
    hx_log_say(log, HX_LOG_DEBUG, "density %s, magnetic %s%s%s", c->density ? c->density : "the file's, if any",
               c->magnetic ? c->magnetic : "the file's, if any", c->magnetic_face ? ", faces " : "",
               c->magnetic_face ? c->magnetic_face : "");
    if (a->o.fit[1] > 0) hx_log_say(log, HX_LOG_DEBUG, "slope fit over shells %g to %g", a->o.fit[0], a->o.fit[1]);
    else hx_log_say(log, HX_LOG_DEBUG, "slope fit over the recorded band, else shells 2 to N/4");
    if (a->o.remove_scale > 0) hx_log_say(log, HX_LOG_DEBUG, "flow smoothed on %g removed first", a->o.remove_scale);
    if (a->check)
        hx_log_say(log, HX_LOG_DEBUG, "check against %s%s%s", a->expect ? "--expect " : "the request the file records",
                   a->expect ? a->expect : "", a->tolerance ? " with --tolerance" : "");
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
    /* before MPI-IO opens the input: a directory or a missing file is one line, not the MPI
     * library's trace; no output may be the input or another output */
    const hx_cli_file in[] = {{"FILE", a.o.cube.file}};
    const hx_cli_file out[] = {{"--json", a.json}, {"--csv", a.csv}, {"--plot", a.plot}, {"--timings", a.timings}};
    st = hx_cli_check_files_agreed(in, 1, out, 4, comm);
    if (st != HX_OK) return hx_cli_fail(st, rank);
    if (a.verify) { /* the file's integrity first: a changed dataset makes every number below moot */
        hx_io_verify_counts vc = {0, 0, 0, 0};
        st = hx_io_verify(a.o.cube.file, comm, a.verbosity > HX_LOG_QUIET && rank == 0 ? stdout : NULL, &vc);
        if (st == HX_OK && vc.datasets > 0 && vc.missing == vc.datasets)
            st = hx_error_set(HX_ERR_ARG, "--verify: %s carries no checksums (written by another program or by helmix "
                                          "before 0.2): nothing to verify", a.o.cube.file);
        st = hx_error_agree(comm, st);
        if (st != HX_OK) return hx_cli_fail(st, rank);
        if (vc.bad > 0 || vc.missing > 0) {
            if (rank == 0)
                fprintf(stderr, "helmix: %s: %d of %d datasets changed since make wrote them%s\n", a.o.cube.file,
                        vc.bad + vc.missing, vc.datasets, vc.missing ? " (or lost their checksum)" : "");
            return HX_EXIT_CHECK;
        }
    }
    hx_run_opts run = hx_run_defaults();
    run.threads = a.o.threads;
    hx_cpus cpus;
    if ((st = hx_fft_cpus(comm, &cpus)) != HX_OK) return hx_cli_fail(st, rank);
    hx_timer *timer = NULL;
    if (a.timings) {
        st = hx_error_agree(comm, hx_timer_create(&timer, "inspect"));
        if (st != HX_OK) return hx_cli_fail(st, rank);
        hx_timer_note_text(timer, "file", a.o.cube.file);
        hx_timer_note(timer, "threads", hx_fft_threads(&run));
        hx_timer_note(timer, "cores_per_rank", cpus.cores);
        a.o.timer = timer;
    }
    hx_log log;
    hx_log_init(&log, comm, a.verbosity, stderr);
    char warn[400];
    if (hx_fft_threads_warning(hx_fft_threads(&run), &cpus, warn, sizeof warn)) hx_log_say(&log, HX_LOG_QUIET, "%s", warn);
    say_options(&log, &a);
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
