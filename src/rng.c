/* rng.c — Philox4x32-10 draws keyed on the global wavevector; Box-Muller for Gaussians. */
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

void hx_rng_uniform2(const uint32_t b[4], double u[2])
{
    /* 52 bits each, offset by half a step so neither 0 nor 1 occurs (log(u) stays finite):
     * the largest value, 1 - 2^-53, is exactly representable; with 53 bits it would round to 1. */
    const double step = 1.0 / 4503599627370496.0; /* 2^-52 */
    uint64_t m0 = ((uint64_t)b[0] << 20) | (b[1] >> 12);
    uint64_t m1 = ((uint64_t)b[2] << 20) | (b[3] >> 12);
    u[0] = ((double)m0 + 0.5) * step;
    u[1] = ((double)m1 + 0.5) * step;
}

void hx_rng_mode(uint64_t seed, int64_t nx, int64_t ny, int64_t nz, uint32_t comp,
                 hx_amplitudes amp, int flip, double w[2])
{
    if (nx == 0 && ny == 0 && nz == 0) {
        w[0] = w[1] = 0.0;
        return;
    }
    int canon = hx_rng_canonical(nx, ny, nz);
    uint32_t bits[4];
    double u[2];
    if (canon) hx_rng_bits(seed, nx, ny, nz, comp, bits);
    else hx_rng_bits(seed, -nx, -ny, -nz, comp, bits);
    hx_rng_uniform2(bits, u);
    double r = amp == HX_AMP_FIXED ? 1.0 : sqrt(-log(u[0]));
    double phi = 2.0 * M_PI * u[1];
    double s = flip ? -r : r;
    w[0] = s * cos(phi);
    w[1] = (canon ? s : -s) * sin(phi);
}
