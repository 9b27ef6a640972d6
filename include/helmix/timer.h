/* helmix/timer.h — phase timings of one run, reduced over ranks and written as JSON
 * (`--timings FILE.json` of make and inspect; the schema is docs/timings.schema.json).
 *
 * A phase is a name; begin/end pairs add wall time to it (a phase may be entered many times),
 * and end may add bytes moved and transforms executed. Every rank must meet the same phases in
 * the same order, which the pipelines do by construction. All calls accept t == NULL and then
 * do nothing, so the pipelines time unconditionally. */
#ifndef HELMIX_TIMER_H
#define HELMIX_TIMER_H

#include <mpi.h>
#include <stdint.h>

#include "helmix/error.h"

typedef struct hx_timer hx_timer;

/* Not collective: a timer for `command` ("make", "inspect", ...). */
hx_status hx_timer_create(hx_timer **t, const char *command);

/* Not collective: start phase `name` (created on first use). */
void hx_timer_begin(hx_timer *t, const char *name);

/* Not collective: end phase `name`, adding the time since its begin, `bytes` of data moved
 * (written or read by this rank; 0 if none) and `transforms` FFTs executed (0 if none). */
void hx_timer_end(hx_timer *t, const char *name, double bytes, int transforms);

/* Not collective: a number describing the run ("cells", "threads", "compute_bits", ...). */
void hx_timer_note(hx_timer *t, const char *key, double value);

/* Not collective: a text describing the run ("recipe", "file", "compute", ...). */
void hx_timer_note_text(hx_timer *t, const char *key, const char *value);

/* Collective: reduce every phase over comm (min, mean, max of the seconds; bytes and
 * transforms summed and per rank), gather each rank's peak RSS, and have rank 0 write the
 * JSON document to path (through path.partial and a rename). Agreed on every rank. */
hx_status hx_timer_write(hx_timer *t, const char *path, MPI_Comm comm);

/* Not collective: the grid of the run (Nx, Ny, Nz); written as "grid" and "cells" (the product),
 * which `helmix scaling` groups runs by. */
void hx_timer_grid(hx_timer *t, const int64_t n[3]);

void hx_timer_destroy(hx_timer **t);

#endif
