/* helmix/rng.h — per-mode random draws keyed on (seed, global integer wavevector).
 *
 * A counter-based generator (Philox4x64-10; Salmon et al. 2011, Proc. SC'11, "Parallel random
 * numbers: as easy as 1, 2, 3") maps the key (seed) and counter (n_x, n_y, n_z, round) to
 * 256 random bits, enough for the three components of a mode in one call most of the time,
 * so a mode's draw never depends on array position, rank or grid size: the foundation of
 * rank-count invariance and resolution nesting. Hermitian symmetry is exact: only the
 * canonical half of k space is drawn, the other half is its complex conjugate.
 * All functions are pure and not collective. */
#ifndef HELMIX_RNG_H
#define HELMIX_RNG_H

#include <stdint.h>

#include "helmix/recipe.h"

/* The raw 256 bits for (seed, stream, n, round): out[0..3]. The stream (velocity 0, density 1,
 * ...) is a word of the key, so fields never share draws; stream 0 is the key of every
 * earlier helmix file. */
void hx_rng_bits(uint64_t seed, uint64_t stream, int64_t nx, int64_t ny, int64_t nz, uint64_t round, uint64_t out[4]);

/* 1 if n is in the canonical half (first nonzero of nx, ny, nz is positive), else 0. */
static inline int hx_rng_canonical(int64_t nx, int64_t ny, int64_t nz)
{
    return nx > 0 || (nx == 0 && (ny > 0 || (ny == 0 && nz > 0)));
}

/* The three complex draws w[c] = (w[2c], w[2c+1]) of mode n, honouring w(-n) = conj(w(n)).
 * gaussian: each E|w_c|^2 = 1 (polar method; |w_c|^2 is exponential with mean 1);
 * fixed: |w_c| = 1 and a uniform random phase. flip negates. n = 0 gives 0. */
void hx_rng_vector(uint64_t seed, uint64_t stream, int64_t nx, int64_t ny, int64_t nz, hx_amplitudes amp, int flip, double w[6]);

/* The same draws for `count` modes n[i] at once, into w[i][0..5]. Identical to calling
 * hx_rng_vector for each; the first Philox block of every mode is computed round by round
 * across the batch, so the processor overlaps the modes' independent multiply chains. */
void hx_rng_vectors(uint64_t seed, uint64_t stream, const int64_t (*n)[3], int count, hx_amplitudes amp, int flip, double (*w)[6]);

#endif
