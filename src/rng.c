/* rng.c — Philox4x32-10 draws keyed on the global wavevector; polar-method Gaussians. */
#include "helmix/rng.h"

#include <math.h>

#include <Random123/philox.h>

void hx_rng_bits(uint64_t seed, int64_t nx, int64_t ny, int64_t nz, uint32_t comp, uint32_t out[4])
{
    philox4x32_key_t key = {{(uint32_t)seed, (uint32_t)(seed >> 32)}};
    philox4x32_ctr_t ctr = {{(uint32_t)nx, (uint32_t)ny, (uint32_t)nz, comp}};
    philox4x32_ctr_t r = philox4x32(ctr, key);
    for (int i = 0; i < 4; i++) out[i] = r.v[i];
}

/* Marsaglia's polar method (Marsaglia & Bray 1964, SIAM Review 6, 260): a point (x, y) uniform
 * in the unit disc gives |w|^2 = -ln s (exponential, mean 1) and phase (x + iy)/sqrt(s) without
 * any sine or cosine. Each 128-bit block offers two candidate points; a mode whose candidates
 * all miss the disc (probability (1 - pi/4)^2 per block) moves on to the next block, keyed by a
 * round number in the high bits of the component word, so the draw stays a pure function of
 * (seed, n, comp). */
void hx_rng_mode(uint64_t seed, int64_t nx, int64_t ny, int64_t nz, uint32_t comp,
                 hx_amplitudes amp, int flip, double w[2])
{
    if (nx == 0 && ny == 0 && nz == 0) {
        w[0] = w[1] = 0.0;
        return;
    }
    int canon = hx_rng_canonical(nx, ny, nz);
    if (!canon) nx = -nx, ny = -ny, nz = -nz;
    const double step = 1.0 / 2147483648.0; /* 2^-31: coordinates in (-1, 1) */
    double x = 0, y = 0, s = 0;
    for (uint32_t round = 0; !(s > 0 && s < 1); round++) {
        uint32_t b[4];
        hx_rng_bits(seed, nx, ny, nz, comp | (round << 8), b);
        for (int j = 0; j < 4; j += 2) {
            x = ((double)b[j] + 0.5) * step - 1.0;
            y = ((double)b[j + 1] + 0.5) * step - 1.0;
            s = x * x + y * y;
            if (s > 0 && s < 1) break;
        }
    }
    double f = amp == HX_AMP_FIXED ? 1.0 / sqrt(s) : sqrt(-log(s) / s);
    if (flip) f = -f;
    w[0] = f * x;
    w[1] = (canon ? f : -f) * y;
}
