/* fft.c — FFTW set-up shared by make and inspect: threads, planning effort, wisdom.
 * Invariant: rank 0 alone touches the wisdom file; what it found is agreed before any rank
 * broadcasts or plans. */
#define _GNU_SOURCE /* sched_getaffinity, CPU_COUNT */
#include "helmix/fft.h"

#include <fftw3-mpi.h>
#include <sched.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "check.h"

static const char *const effort_names[] = {"estimate", "measure", "patient"};

const char *hx_fft_effort_name(hx_effort e) { return e >= 0 && e <= HX_EFFORT_PATIENT ? effort_names[e] : "?"; }

int hx_fft_effort_parse(const char *s)
{
    for (int i = 0; i <= HX_EFFORT_PATIENT; i++)
        if (s && !strcmp(s, effort_names[i])) return i;
    return -1;
}

hx_status hx_fft_cpus(MPI_Comm comm, hx_cpus *c)
{
    hx_status st = HX_OK;
    MPI_Comm node = MPI_COMM_NULL;
    long online = sysconf(_SC_NPROCESSORS_ONLN);
    cpu_set_t set;
    CPU_ZERO(&set);
    int v[3]; /* -(CPUs of this rank), -(CPUs of its node), ranks on its node: one MAX for all three */
    v[1] = -(online > 0 ? (int)online : 1);
    v[0] = sched_getaffinity(0, sizeof set, &set) == 0 && CPU_COUNT(&set) > 0 ? -CPU_COUNT(&set) : v[1];
    HX_MPI(MPI_Comm_split_type(comm, MPI_COMM_TYPE_SHARED, 0, MPI_INFO_NULL, &node));
    HX_MPI(MPI_Comm_size(node, &v[2]));
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, v, 3, MPI_INT, MPI_MAX, comm));
    c->cores = -v[0], c->node_cpus = -v[1], c->node_ranks = v[2];
fail:
    if (node != MPI_COMM_NULL) MPI_Comm_free(&node);
    return st;
}

int hx_fft_threads_warning(int threads, const hx_cpus *c, char *msg, size_t len)
{
    if (threads <= 1) return 0; /* more ranks than CPUs is the launcher's explicit choice (--oversubscribe) */
    if (threads > c->cores && c->cores < c->node_cpus) {
        snprintf(msg, len,
                 "warning: %d threads per rank, but a rank may run on only %d CPU%s (its affinity mask): the threads "
                 "share %s. Give each rank %d cores: mpiexec --bind-to none or --map-by slot:PE=%d (Open MPI), "
                 "srun --cpus-per-task=%d (Slurm)",
                 threads, c->cores, c->cores == 1 ? "" : "s", c->cores == 1 ? "it" : "them", threads, threads, threads);
        return 1;
    }
    if ((long)threads * c->node_ranks > c->node_cpus) {
        snprintf(msg, len,
                 "warning: %d rank%s per node x %d threads = %ld, but a node has %d CPUs: the threads wait for each "
                 "other (use fewer threads or fewer ranks per node)",
                 c->node_ranks, c->node_ranks == 1 ? "" : "s", threads, (long)threads * c->node_ranks, c->node_cpus);
        return 1;
    }
    return 0;
}

unsigned hx_fft_flags(const hx_run_opts *o)
{
    if (!o) return FFTW_ESTIMATE;
    return o->effort == HX_EFFORT_PATIENT ? FFTW_PATIENT : o->effort == HX_EFFORT_MEASURE ? FFTW_MEASURE : FFTW_ESTIMATE;
}

int hx_fft_threads(const hx_run_opts *o)
{
    if (o && o->threads > 0) return o->threads;
    const char *env = getenv("OMP_NUM_THREADS");
    long t = env ? strtol(env, NULL, 10) : 1;
    return t >= 1 && t <= 4096 ? (int)t : 1;
}

/* The one s-expression of FFTW wisdom in text that starts with "(fftw-VERSION tag", copied
 * into a new string, or NULL. */
static char *block(const char *text, const char *tag)
{
    for (const char *p = strstr(text, "(fftw-"); p; p = strstr(p + 1, "(fftw-")) {
        const char *sp = strchr(p, ' ');
        if (!sp || strncmp(sp + 1, tag, strlen(tag)) || (sp[1 + strlen(tag)] != ' ' && sp[1 + strlen(tag)] != '\n')) continue;
        int depth = 0;
        for (const char *q = p; *q; q++) {
            depth += *q == '(' ? 1 : *q == ')' ? -1 : 0;
            if (depth == 0) {
                size_t n = (size_t)(q - p + 1);
                char *out = malloc(n + 1);
                if (out) memcpy(out, p, n), out[n] = '\0';
                return out;
            }
        }
    }
    return NULL;
}

/* Rank 0: import the file's double and single wisdom. 0 when the file does not exist. */
static hx_status read_wisdom(const char *path)
{
    hx_status st = HX_OK;
    FILE *fp = fopen(path, "rb");
    char *text = NULL, *d = NULL, *s = NULL;
    if (!fp) return access(path, F_OK) ? HX_OK : hx_error_set(HX_ERR_IO, "--wisdom %s: cannot read it", path);
    if (fseek(fp, 0, SEEK_END) || ftell(fp) < 0 || ftell(fp) > (64L << 20)) {
        fclose(fp);
        return hx_error_set(HX_ERR_ARG, "--wisdom %s: not an FFTW wisdom file (unreadable or larger than 64 MiB)", path);
    }
    long n = ftell(fp);
    rewind(fp);
    HX_ALLOC(text, n + 1);
    if ((long)fread(text, 1, (size_t)n, fp) != n) HX_FAIL(HX_ERR_IO, "--wisdom %s: read failed", path);
    text[n] = '\0';
    d = block(text, "fftw_wisdom");
    s = block(text, "fftwf_wisdom");
    if (n > 0 && !d && !s) HX_FAIL(HX_ERR_ARG, "--wisdom %s: not an FFTW wisdom file (written by helmix --wisdom)", path);
    if ((d && !fftw_import_wisdom_from_string(d)) || (s && !fftwf_import_wisdom_from_string(s)))
        HX_FAIL(HX_ERR_ARG, "--wisdom %s: FFTW refused its wisdom (another FFTW version or a damaged file)", path);
fail:
    if (fp) fclose(fp);
    free(text);
    free(d);
    free(s);
    return st;
}

hx_status hx_fft_begin(const hx_run_opts *o, MPI_Comm comm)
{
    hx_status st = HX_OK;
    int rank = 0, threads = hx_fft_threads(o);
    static int threads_ready = 0;
    HX_MPI(MPI_Comm_rank(comm, &rank));
    int level = MPI_THREAD_SINGLE;
    HX_MPI(MPI_Query_thread(&level));
    if (threads > 1 && level < MPI_THREAD_FUNNELED)
        HX_FAIL(HX_ERR_ARG, "--threads %d: this MPI library runs single-threaded processes only (use more ranks instead)",
                threads);
    if (!threads_ready) { /* before fftw_mpi_init, as FFTW's manual asks */
        if (!fftw_init_threads() || !fftwf_init_threads()) st = hx_error_set(HX_ERR_FFTW, "FFTW could not start its threads");
        threads_ready = 1;
    }
    HX_TRY(hx_error_agree(comm, st));
    fftw_plan_with_nthreads(threads);
    fftwf_plan_with_nthreads(threads);
    fftw_mpi_init();
    fftwf_mpi_init();
    if (!o || !o->wisdom) return HX_OK;
    if (rank == 0) st = read_wisdom(o->wisdom);
    HX_TRY(hx_error_agree(comm, st));
    fftw_mpi_broadcast_wisdom(comm);
    fftwf_mpi_broadcast_wisdom(comm);
fail:
    return st;
}

hx_status hx_fft_end(const hx_run_opts *o, MPI_Comm comm)
{
    hx_status st = HX_OK;
    int rank = 0;
    char *d = NULL, *s = NULL, tmp[4200];
    FILE *fp = NULL;
    if (!o || !o->wisdom) return HX_OK;
    HX_MPI(MPI_Comm_rank(comm, &rank));
    fftw_mpi_gather_wisdom(comm);
    fftwf_mpi_gather_wisdom(comm);
    if (rank == 0) {
        d = fftw_export_wisdom_to_string();
        s = fftwf_export_wisdom_to_string();
        if (snprintf(tmp, sizeof tmp, "%s.partial", o->wisdom) >= (int)sizeof tmp)
            st = hx_error_set(HX_ERR_ARG, "--wisdom: path too long");
        else if (!d || !s) st = hx_error_set(HX_ERR_MEM, "FFTW could not export its wisdom");
        else if (!(fp = fopen(tmp, "wb"))) st = hx_error_set(HX_ERR_IO, "--wisdom %s: cannot write %s", o->wisdom, tmp);
        else {
            int bad = fputs(d, fp) < 0 || fputs(s, fp) < 0;
            bad |= fclose(fp) != 0;
            fp = NULL;
            if (bad || rename(tmp, o->wisdom)) {
                remove(tmp);
                st = hx_error_set(HX_ERR_IO, "--wisdom %s: writing it failed (disk full?)", o->wisdom);
            }
        }
    }
    free(d);
    free(s);
    HX_TRY(hx_error_agree(comm, st));
fail:
    return st;
}
