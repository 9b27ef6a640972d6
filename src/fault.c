/* fault.c — the test switches HELMIX_FAULT (one chosen rank fails in one chosen phase) and
 * HELMIX_STALL (every rank pauses once in one chosen phase), and the signal handlers that
 * remove the files a run is writing.
 * Invariant: the handler touches only memory prepared before the signal (fixed slots, a name
 * is complete before its slot is marked used) and calls only unlink, signal and raise. */
#include "helmix/fault.h"

#include <errno.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "helmix/recipe.h"

static const char *const phases[] = {"alloc", "plan", "create", "write", "close", "rename", "xdmf", "verify"};
#define NPHASE ((int)(sizeof phases / sizeof phases[0]))

/* The index of a phase name, -1 for none. */
static int phase_index(const char *name)
{
    for (int p = 0; p < NPHASE; p++)
        if (!strcmp(name, phases[p])) return p;
    return -1;
}

/* The parsed switch: read once (every rank reads the same environment under mpiexec). */
static struct {
    int parsed, bad, rank, phase, nth;
    int passes[NPHASE];
    char text[128];
} sw = {0, 0, -1, -1, 1, {0}, ""};

static void parse_switch(void)
{
    const char *v = getenv("HELMIX_FAULT");
    sw.parsed = 1;
    if (!v || !*v) return;
    snprintf(sw.text, sizeof sw.text, "%s", v);
    char name[32] = "";
    int rank = -1, nth = 1, used = 0;
    int n = sscanf(v, "%d:%31[a-z]%n", &rank, name, &used);
    if (n == 2 && v[used] == ':') {
        char *end = NULL;
        long k = strtol(v + used + 1, &end, 10);
        nth = end && !*end && k >= 1 && k <= 1000000 ? (int)k : -1;
        used = (int)strlen(v);
    }
    sw.phase = phase_index(name);
    sw.bad = n != 2 || rank < 0 || nth < 1 || v[used] != '\0' || sw.phase < 0;
    sw.rank = rank, sw.nth = nth;
}

/* The stall switch HELMIX_STALL=PHASE:SECONDS, read once. */
static struct {
    int parsed, bad, phase, done;
    double seconds;
    char text[64];
} stall = {0, 0, -1, 0, 0.0, ""};

static void parse_stall(void)
{
    const char *v = getenv("HELMIX_STALL");
    stall.parsed = 1;
    if (!v || !*v) return;
    snprintf(stall.text, sizeof stall.text, "%s", v);
    char name[32] = "";
    int used = 0;
    double t = -1.0;
    stall.bad = sscanf(v, "%31[a-z]:%lf%n", name, &t, &used) != 2 || v[used] != '\0' || !(t > 0.0 && t <= 3600.0);
    stall.phase = phase_index(name);
    if (stall.phase < 0) stall.bad = 1;
    stall.seconds = t;
}

/* Sleep through signals that have no handler of ours; a signal we catch ends the process
 * inside its handler, so the sleep never outlives it. */
static void pause_for(double seconds)
{
    struct timespec left = {(time_t)seconds, (long)((seconds - (double)(time_t)seconds) * 1e9)};
    while (nanosleep(&left, &left) != 0 && errno == EINTR) {
    }
}

hx_status hx_fault_point(const char *phase, MPI_Comm comm)
{
    if (!sw.parsed) parse_switch();
    if (!stall.parsed) parse_stall();
    if (stall.bad)
        return hx_error_set(HX_ERR_ARG, "HELMIX_STALL=%s: write PHASE:SECONDS with PHASE one of alloc, plan, create, "
                                        "write, close, rename, xdmf, verify and 0 < SECONDS <= 3600 (a switch for tests)",
                            stall.text);
    if (stall.text[0] && !stall.done && !strcmp(phase, phases[stall.phase])) {
        stall.done = 1;
        pause_for(stall.seconds);
    }
    if (!sw.text[0]) return HX_OK;
    if (sw.bad)
        return hx_error_set(HX_ERR_ARG, "HELMIX_FAULT=%s: write RANK:PHASE or RANK:PHASE:N with PHASE one of alloc, "
                                        "plan, create, write, close, rename, xdmf, verify (a switch for tests)", sw.text);
    int p = phase_index(phase), rank = 0;
    if (p < 0 || p != sw.phase || MPI_Comm_rank(comm, &rank) != MPI_SUCCESS || rank != sw.rank) return HX_OK;
    if (++sw.passes[p] != sw.nth) return HX_OK;
    return hx_error_set(HX_ERR_IO, "injected fault: rank %d failed in phase '%s' (pass %d) as HELMIX_FAULT=%s asks",
                        rank, phase, sw.nth, sw.text);
}

int hx_fault_no_reserve(void)
{
    const char *v = getenv("HELMIX_NO_RESERVE");
    return v && !strcmp(v, "1");
}

/* The guarded names. A slot's name is written while the slot is unused and signals that use it
 * are blocked, and only then marked used. */
static char guard_path[HX_FAULT_GUARDS][HX_PATH_MAX + 64];
static volatile sig_atomic_t guard_used[HX_FAULT_GUARDS];
static const int caught[] = {SIGINT, SIGTERM, SIGHUP, SIGXCPU};
#define NCAUGHT ((int)(sizeof caught / sizeof caught[0]))

static void block(sigset_t *old)
{
    sigset_t s;
    sigemptyset(&s);
    for (int i = 0; i < NCAUGHT; i++) sigaddset(&s, caught[i]);
    sigprocmask(SIG_BLOCK, &s, old);
}

int hx_fault_guard_add(const char *path)
{
    if (!path || strlen(path) >= sizeof guard_path[0]) return -1;
    sigset_t old;
    block(&old);
    int slot = -1;
    for (int i = 0; i < HX_FAULT_GUARDS && slot < 0; i++)
        if (!guard_used[i]) slot = i;
    if (slot >= 0) {
        memcpy(guard_path[slot], path, strlen(path) + 1);
        guard_used[slot] = 1;
    }
    sigprocmask(SIG_SETMASK, &old, NULL);
    return slot >= 0 ? 0 : -1;
}

void hx_fault_guard_remove(const char *path)
{
    if (!path) return;
    sigset_t old;
    block(&old);
    for (int i = 0; i < HX_FAULT_GUARDS; i++)
        if (guard_used[i] && !strcmp(guard_path[i], path)) guard_used[i] = 0;
    sigprocmask(SIG_SETMASK, &old, NULL);
}

static void on_signal(int sig)
{
    for (int i = HX_FAULT_GUARDS - 1; i >= 0; i--) /* highest slot first: a partial before its lock */
        if (guard_used[i]) unlink(guard_path[i]);
    signal(sig, SIG_DFL);
    raise(sig); /* delivered on return: the process ends as killed by sig */
}

void hx_fault_install_handlers(void)
{
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigemptyset(&sa.sa_mask);
    for (int i = 0; i < NCAUGHT; i++) sigaddset(&sa.sa_mask, caught[i]); /* one handler at a time */
    for (int i = 0; i < NCAUGHT; i++) sigaction(caught[i], &sa, NULL);
}
