/* rng.c — Philox4x64-10 draws keyed on the global wavevector; polar-method Gaussians. */
#include "helmix/rng.h"

#include <math.h>

#include <Random123/philox.h>

/* Second key word: separates helmix's streams from any other use of the same seed. */
#define HX_RNG_DOMAIN 0x68656c6d69780001ULL

void hx_rng_bits(uint64_t seed, int64_t nx, int64_t ny, int64_t nz, uint64_t round, uint64_t out[4])
{
    philox4x64_key_t key = {{seed, HX_RNG_DOMAIN}};
    philox4x64_ctr_t ctr = {{(uint64_t)nx, (uint64_t)ny, (uint64_t)nz, round}};
    philox4x64_ctr_t r = philox4x64(ctr, key);
    for (int i = 0; i < 4; i++) out[i] = r.v[i];
}

/* Marsaglia's polar method (Marsaglia & Bray 1964, SIAM Review 6, 260): a point (x, y) uniform
 * in the unit disc gives |w|^2 = -ln s (exponential, mean 1) and phase (x + iy)/sqrt(s) without
 * any sine or cosine. Each 256-bit block offers four candidate points (32 bits per coordinate);
 * accepted points go to the components in order, and a mode still short of three moves on to
 * the next block (about one mode in five), keyed by the round number, so the draw stays a
 * pure function of (seed, n). */
void hx_rng_vector(uint64_t seed, int64_t nx, int64_t ny, int64_t nz, hx_amplitudes amp, int flip, double w[6])
{
    if (nx == 0 && ny == 0 && nz == 0) {
        for (int i = 0; i < 6; i++) w[i] = 0.0;
        return;
    }
    int canon = hx_rng_canonical(nx, ny, nz);
    if (!canon) nx = -nx, ny = -ny, nz = -nz;
    const double step = 1.0 / 2147483648.0; /* 2^-31: coordinates in (-1, 1) */
    int c = 0;
    for (uint64_t round = 0; c < 3; round++) {
        uint64_t b[4];
        hx_rng_bits(seed, nx, ny, nz, round, b);
        for (int j = 0; j < 4 && c < 3; j++) {
            double x = ((double)(uint32_t)b[j] + 0.5) * step - 1.0;
            double y = ((double)(uint32_t)(b[j] >> 32) + 0.5) * step - 1.0;
            double s = x * x + y * y;
            if (!(s > 0 && s < 1)) continue;
            double f = amp == HX_AMP_FIXED ? 1.0 / sqrt(s) : sqrt(-log(s) / s);
            if (flip) f = -f;
            w[2 * c] = f * x;
            w[2 * c + 1] = (canon ? f : -f) * y;
            c++;
        }
    }
}
