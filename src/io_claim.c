/* io_claim.c — one run per output: FILE.lock created exclusively and held with flock by rank 0,
 * the partial file created exclusively beside it, stale leftovers of a killed run recognised and
 * removed, and names short enough for the MPI-IO layer.
 * Invariant: a name is registered with the signal guard (on every rank) only while this run
 * owns the file, so a signal never removes another run's files; the lock is removed last. */
#define _GNU_SOURCE
#include "io_claim.h"

#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "check.h"
#include "helmix/fault.h"

/* What follows the name of FILE in the longest derived name (FILE.xmf.partial). */
#define LONGEST_SUFFIX 12

static const char *base_of(const char *path)
{
    const char *b = strrchr(path, '/');
    return b ? b + 1 : path;
}

/* The directory part of path ("." for a bare name), in out. */
static void dir_of(const char *path, char *out, size_t len)
{
    const char *b = strrchr(path, '/');
    if (!b) snprintf(out, len, ".");
    else if (b == path) snprintf(out, len, "/");
    else snprintf(out, len, "%.*s", (int)(b - path), path);
}

hx_status io_claim_check_name(const char *path)
{
    hx_status st = HX_OK;
    char dir[HX_PATH_MAX];
    size_t n = strlen(path), nb = strlen(base_of(path));
    if (n == 0) HX_FAIL(HX_ERR_ARG, "no output file name given");
    if (n + LONGEST_SUFFIX + 1 > HX_PATH_MAX)
        HX_FAIL(HX_ERR_ARG, "output path is %zu characters: at most %d (helmix adds up to '.xmf.partial' to it)", n,
                HX_PATH_MAX - LONGEST_SUFFIX - 1);
    if (nb == 0 || !strcmp(base_of(path), ".") || !strcmp(base_of(path), ".."))
        HX_FAIL(HX_ERR_ARG, "output %s names a directory: give a file name", path);
    dir_of(path, dir, sizeof dir);
    long name_max = pathconf(dir, _PC_NAME_MAX);
    if (name_max <= 0) name_max = 255;
    if ((long)(nb + LONGEST_SUFFIX) > name_max)
        HX_FAIL(HX_ERR_ARG, "the output file name '%.40s...' is %zu characters: at most %ld on this file system "
                "(helmix adds up to '.xmf.partial' to it)", base_of(path), nb, name_max - LONGEST_SUFFIX);
fail:
    return st;
}

hx_status io_mpi_name(const char *path, MPI_Comm comm, char *out, size_t len, int *dirfd)
{
    hx_status st = HX_OK;
    int fd = -1, rank = 0;
    *dirfd = -1;
    HX_MPI(MPI_Comm_rank(comm, &rank));
    if (strlen(path) <= IO_MPI_NAME_MAX) { /* the same decision on every rank: the same path */
        snprintf(out, len, "%s", path);
        return HX_OK;
    }
    const char *base = base_of(path);
    if (strlen(base) > IO_MPI_NAME_MAX - 32)
        HX_FAIL(HX_ERR_ARG, "the file name '%.40s...' is %zu characters, too long for the MPI-IO layer (at most %d): "
                "rename it or link it to a shorter name", base, strlen(base), IO_MPI_NAME_MAX - 32);
    if (access("/proc/self/fd", X_OK) != 0)
        HX_FAIL(HX_ERR_ARG, "the path of %s is %zu characters, too long for the MPI-IO layer (at most %d), and "
                "/proc/self/fd is not there to shorten it: choose a shorter path", base, strlen(path), IO_MPI_NAME_MAX);
    char dir[HX_PATH_MAX];
    dir_of(path, dir, sizeof dir);
    fd = open(dir, O_RDONLY | O_DIRECTORY | O_CLOEXEC);
    st = fd >= 0 ? HX_OK : hx_error_set(HX_ERR_ARG, "cannot open the directory of %s: %s", path, strerror(errno));
    HX_TRY(hx_error_agree(comm, st));
    /* the same descriptor number on every rank, so every rank passes the same name */
    for (int round = 0; round < 16; round++) {
        int have[2] = {fd, -fd}, want = 0;
        HX_MPI(MPI_Allreduce(MPI_IN_PLACE, have, 2, MPI_INT, MPI_MAX, comm));
        if (have[0] == -have[1]) break;
        want = have[0];
        if (fd != want) { /* the lowest free number from the largest up */
            int nfd = fcntl(fd, F_DUPFD_CLOEXEC, want);
            st = nfd >= 0 ? HX_OK : hx_error_set(HX_ERR_IO, "cannot duplicate a descriptor of %s: %s", dir, strerror(errno));
            close(fd);
            fd = nfd;
        }
        HX_TRY(hx_error_agree(comm, st));
        if (round == 15) HX_FAIL(HX_ERR_IO, "the ranks could not agree on a descriptor for %s", dir);
    }
    snprintf(out, len, "/proc/self/fd/%d/%s", fd, base);
    *dirfd = fd;
    return HX_OK;
fail:
    if (fd >= 0) close(fd);
    return st;
}

/* "host H, pid P, started T": who holds a lock, as written into it. */
static void owner_line(char *out, size_t len)
{
    char host[256] = "?", when[64] = "?";
    gethostname(host, sizeof host - 1);
    time_t now = time(NULL);
    struct tm tmv;
    if (localtime_r(&now, &tmv)) strftime(when, sizeof when, "%Y-%m-%d %H:%M:%S", &tmv);
    snprintf(out, len, "host %s, pid %ld, started %s", host, (long)getpid(), when);
}

/* The two lines of a lock file: the owner, and the partial file it writes. */
static void read_lock(int fd, char *owner, size_t olen, char *partial, size_t plen)
{
    char buf[HX_PATH_MAX + 512];
    ssize_t n = pread(fd, buf, sizeof buf - 1, 0);
    buf[n > 0 ? n : 0] = '\0';
    char *nl = strchr(buf, '\n');
    if (nl) *nl = '\0';
    snprintf(owner, olen, "%s", buf[0] ? buf : "owner unknown");
    partial[0] = '\0';
    if (nl) {
        char *p = nl + 1, *e = strchr(p, '\n');
        if (e) *e = '\0';
        snprintf(partial, plen, "%s", p);
    }
}

/* A partial file of a stale lock may be removed only if it is one helmix names for this FILE. */
static int ours(const io_claim *c, const char *partial)
{
    char dir[HX_PATH_MAX], pdir[HX_PATH_MAX];
    if (!partial[0]) return 0;
    if (!strcmp(partial, c->partial)) return 1;
    dir_of(c->path, dir, sizeof dir);
    dir_of(partial, pdir, sizeof pdir);
    const char *b = base_of(partial);
    size_t n = strlen(b);
    return !strcmp(dir, pdir) && !strncmp(b, ".hx-", 4) && n > 12 && !strcmp(b + n - 8, ".partial");
}

static void add_note(io_claim *c, const char *fmt, const char *a, const char *b)
{
    size_t used = strlen(c->note);
    if (used + 3 >= sizeof c->note) return;
    if (used) snprintf(c->note + used, sizeof c->note - used, "; ");
    used = strlen(c->note);
    snprintf(c->note + used, sizeof c->note - used, fmt, a, b);
}

/* Rank 0: create or take over FILE.lock and hold it. */
static hx_status take_lock(io_claim *c)
{
    hx_status st = HX_OK;
    char owner[512], other[HX_PATH_MAX], host[256] = "";
    gethostname(host, sizeof host - 1);
    for (int attempt = 0; attempt < 5; attempt++) {
        int fd = open(c->lock, O_RDWR | O_CREAT | O_EXCL | O_CLOEXEC, 0644);
        if (fd >= 0) {
            if (flock(fd, LOCK_EX | LOCK_NB) != 0 && errno == EWOULDBLOCK) { /* taken over in the same instant */
                close(fd);
                HX_FAIL(HX_ERR_EXISTS, "another helmix run is writing %s (it holds %s): wait for it or choose "
                        "another output", c->path, c->lock);
            }
            c->lockfd = fd;
            hx_fault_guard_add(c->lock);
            return HX_OK;
        }
        if (errno != EEXIST)
            HX_FAIL(errno == ENOSPC || errno == EDQUOT || errno == EIO ? HX_ERR_IO : HX_ERR_ARG, "cannot create %s: %s",
                    c->lock, strerror(errno));
        fd = open(c->lock, O_RDWR | O_CLOEXEC);
        if (fd < 0 && errno == ENOENT) continue; /* its run ended meanwhile */
        if (fd < 0) HX_FAIL(HX_ERR_ARG, "cannot open %s: %s", c->lock, strerror(errno));
        read_lock(fd, owner, sizeof owner, other, sizeof other);
        if (flock(fd, LOCK_EX | LOCK_NB) != 0) {
            int busy = errno == EWOULDBLOCK;
            close(fd);
            if (busy)
                HX_FAIL(HX_ERR_EXISTS, "another helmix run is writing %s (%s, holding %s): wait for it to end or "
                        "choose another output", c->path, owner, c->lock);
            HX_FAIL(HX_ERR_EXISTS, "%s exists (%s) and this file system cannot tell whether that run is alive: if "
                    "no helmix run is writing %s, remove %s and the partial file it names", c->lock, owner, c->path,
                    c->lock);
        }
        struct stat a, b;
        if (fstat(fd, &a) != 0 || stat(c->lock, &b) != 0 || a.st_ino != b.st_ino || a.st_dev != b.st_dev) {
            close(fd); /* removed and made anew while we looked: look again */
            continue;
        }
        /* Nobody holds it: its run was killed. The kernel drops a dead process's flock on this
         * host; a lock written on another host is left alone (its lock may not reach here). */
        char expect[300];
        snprintf(expect, sizeof expect, "host %s, ", host);
        if (strcmp(owner, "owner unknown") != 0 && strncmp(owner, expect, strlen(expect)) != 0) {
            close(fd);
            HX_FAIL(HX_ERR_EXISTS, "%s was left by a run on another host (%s): if no helmix run is writing %s, remove "
                    "%s and the partial file it names", c->lock, owner, c->path, c->lock);
        }
        if (ours(c, other) && unlink(other) == 0)
            add_note(c, "removed %s, left incomplete by an interrupted run (%s)", other, owner);
        if (unlink(c->xmf_partial) == 0) add_note(c, "removed %s, left by an interrupted run%s", c->xmf_partial, "");
        if (ftruncate(fd, 0) != 0) { /* harmless: the content is rewritten below */ }
        c->lockfd = fd;
        hx_fault_guard_add(c->lock);
        return HX_OK;
    }
    HX_FAIL(HX_ERR_EXISTS, "%s keeps changing: another helmix run is starting on %s", c->lock, c->path);
fail:
    return st;
}

/* Rank 0, holding the lock: create the partial file exclusively (0 bytes; HDF5 opens it next). */
static hx_status create_partial(io_claim *c)
{
    hx_status st = HX_OK;
    int fd = -1;
    char owner[512], dir[HX_PATH_MAX];
    snprintf(c->partial, sizeof c->partial, "%s.partial", c->path);
    if (strlen(base_of(c->partial)) > IO_MPI_NAME_MAX - 32) { /* too long for MPI even through /proc */
        dir_of(c->path, dir, sizeof dir);
        snprintf(c->partial, sizeof c->partial, "%s/.hx-XXXXXX.partial", dir);
        fd = mkstemps(c->partial, 8);
        if (fd >= 0) {
            mode_t mask = umask(022);
            umask(mask);
            if (fchmod(fd, 0666 & ~mask) != 0) { /* keeps mkstemp's 0600: still usable */ }
        }
    } else
        for (int attempt = 0; attempt < 2; attempt++) {
            fd = open(c->partial, O_RDWR | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
            if (fd >= 0 || errno != EEXIST) break;
            /* we hold the lock, so no run is writing it: an earlier run's leftover */
            if (unlink(c->partial) == 0)
                add_note(c, "removed %s, left incomplete by an earlier run%s", c->partial, " (no run held the lock)");
        }
    if (fd < 0)
        HX_FAIL(errno == ENOSPC || errno == EDQUOT || errno == EIO ? HX_ERR_IO : HX_ERR_ARG, "cannot create %s: %s",
                c->partial, strerror(errno));
    c->datafd = fd;
    hx_fault_guard_add(c->partial);
    owner_line(owner, sizeof owner);
    char text[HX_PATH_MAX + 600];
    int n = snprintf(text, sizeof text, "%s\n%s\n", owner, c->partial);
    if (pwrite(c->lockfd, text, (size_t)n, 0) != n) { /* the lock still works without its text */ }
fail:
    return st;
}

int io_claim_busy(const char *path, char *msg, size_t len)
{
    char lock[HX_PATH_MAX + 32], owner[512], other[HX_PATH_MAX];
    snprintf(lock, sizeof lock, "%s.lock", path);
    int fd = open(lock, O_RDONLY | O_CLOEXEC);
    if (fd < 0) return 0;
    int busy = flock(fd, LOCK_SH | LOCK_NB) != 0 && errno == EWOULDBLOCK;
    if (busy) {
        read_lock(fd, owner, sizeof owner, other, sizeof other);
        snprintf(msg, len, "another helmix run is writing %s (%s, holding %s): wait for it to end or choose another "
                 "output", path, owner, lock);
    }
    close(fd); /* drops the shared lock if it was taken */
    return busy;
}

hx_status io_claim_take(io_claim *c, const char *path, MPI_Comm comm)
{
    hx_status st = HX_OK;
    memset(c, 0, sizeof *c);
    c->dirfd = c->lockfd = c->datafd = -1;
    HX_MPI(MPI_Comm_rank(comm, &c->rank));
    HX_TRY(io_claim_check_name(path)); /* the same verdict on every rank: the same name */
    snprintf(c->path, sizeof c->path, "%s", path);
    snprintf(c->lock, sizeof c->lock, "%s.lock", path);
    snprintf(c->xmf, sizeof c->xmf, "%s.xmf", path);
    snprintf(c->xmf_partial, sizeof c->xmf_partial, "%s.xmf.partial", path);
    snprintf(c->partial, sizeof c->partial, "%s.partial", path);
    if (c->rank == 0) {
        st = take_lock(c);
        if (st == HX_OK) st = create_partial(c);
    }
    st = hx_error_agree(comm, st);
    if (st == HX_OK) HX_MPI(MPI_Bcast(c->partial, (int)sizeof c->partial, MPI_CHAR, 0, comm));
    if (st == HX_OK) st = io_mpi_name(c->partial, comm, c->mpiname, sizeof c->mpiname, &c->dirfd);
    /* Every rank guards both names: mpiexec passes a signal on to all ranks and sends SIGKILL as
     * soon as the first of them ends, so the first handler to run must clean up for the run. */
    if (st == HX_OK && c->rank != 0) {
        hx_fault_guard_add(c->lock); /* first: the handler removes the highest slot first */
        hx_fault_guard_add(c->partial);
    }
    if (st == HX_OK) return HX_OK;
fail:
    if (c->rank == 0 && c->datafd >= 0) unlink(c->partial);
    io_claim_release(c);
    return st;
}

void io_claim_release(io_claim *c)
{
    hx_fault_guard_remove(c->partial);
    hx_fault_guard_remove(c->xmf_partial);
    if (c->datafd >= 0) close(c->datafd);
    c->datafd = -1;
    if (c->lockfd >= 0) {
        /* while still holding it: a run that opened it before sees a removed lock; only if the
         * name is still this lock (another rank's signal handler may have removed it already) */
        struct stat a, b;
        if (fstat(c->lockfd, &a) == 0 && stat(c->lock, &b) == 0 && a.st_ino == b.st_ino && a.st_dev == b.st_dev)
            unlink(c->lock);
        close(c->lockfd);
    }
    hx_fault_guard_remove(c->lock); /* after the unlink: a signal before it still removes the lock */
    c->lockfd = -1;
    if (c->dirfd >= 0) close(c->dirfd);
    c->dirfd = -1;
}
