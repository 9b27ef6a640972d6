/* rng.c — Philox4x64-10 draws keyed on the global wavevector; polar-method Gaussians. */
#include "helmix/rng.h"

#include <math.h>

#include <Random123/philox.h>

/* Second key word: separates helmix's streams from any other use of the same seed; the stream
 * number goes into its upper half (stream 0 leaves it as it always was). */
#define HX_RNG_DOMAIN 0x68656c6d69780001ULL

static inline uint64_t domain(uint64_t stream) { return HX_RNG_DOMAIN ^ (stream << 32); }

void hx_rng_bits(uint64_t seed, uint64_t stream, int64_t nx, int64_t ny, int64_t nz, uint64_t round, uint64_t out[4])
{
    philox4x64_key_t key = {{seed, domain(stream)}};
    philox4x64_ctr_t ctr = {{(uint64_t)nx, (uint64_t)ny, (uint64_t)nz, round}};
    philox4x64_ctr_t r = philox4x64(ctr, key);
    for (int i = 0; i < 4; i++) out[i] = r.v[i];
}

/* Turn one 256-bit block into accepted polar points, from component c on; returns the next
 * component still to draw. */
static inline int polar(const uint64_t b[4], int c, int canon, hx_amplitudes amp, int flip, double w[6])
{
    const double step = 1.0 / 2147483648.0; /* 2^-31: coordinates in (-1, 1) */
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
    return c;
}

/* Marsaglia's polar method (Marsaglia & Bray 1964, SIAM Review 6, 260): a point (x, y) uniform
 * in the unit disc gives |w|^2 = -ln s (exponential, mean 1) and phase (x + iy)/sqrt(s) without
 * any sine or cosine. Each 256-bit block offers four candidate points (32 bits per coordinate);
 * accepted points go to the components in order, and a mode still short of three moves on to
 * the next block (about one mode in five), keyed by the round number, so the draw stays a
 * pure function of (seed, n). */
void hx_rng_vector(uint64_t seed, uint64_t stream, int64_t nx, int64_t ny, int64_t nz, hx_amplitudes amp, int flip, double w[6])
{
    if (nx == 0 && ny == 0 && nz == 0) {
        for (int i = 0; i < 6; i++) w[i] = 0.0;
        return;
    }
    int canon = hx_rng_canonical(nx, ny, nz);
    if (!canon) nx = -nx, ny = -ny, nz = -nz;
    int c = 0;
    for (uint64_t round = 0; c < 3; round++) {
        uint64_t b[4];
        hx_rng_bits(seed, stream, nx, ny, nz, round, b);
        c = polar(b, c, canon, amp, flip, w);
    }
}

enum { BATCH = 16 };

void hx_rng_vectors(uint64_t seed, uint64_t stream, const int64_t (*n)[3], int count, hx_amplitudes amp, int flip, double (*w)[6])
{
    philox4x64_key_t keys[10];
    keys[0] = (philox4x64_key_t){{seed, domain(stream)}};
    for (int r = 1; r < 10; r++) keys[r] = _philox4x64bumpkey(keys[r - 1]);
    for (int i0 = 0; i0 < count; i0 += BATCH) {
        int m = count - i0 < BATCH ? count - i0 : BATCH, canon[BATCH];
        philox4x64_ctr_t ctr[BATCH];
        for (int j = 0; j < m; j++) {
            const int64_t *k = n[i0 + j];
            canon[j] = hx_rng_canonical(k[0], k[1], k[2]);
            int64_t sg = canon[j] ? 1 : -1;
            ctr[j] = (philox4x64_ctr_t){{(uint64_t)(sg * k[0]), (uint64_t)(sg * k[1]), (uint64_t)(sg * k[2]), 0}};
        }
        for (int r = 0; r < 10; r++) /* round by round across the batch: independent chains */
            for (int j = 0; j < m; j++) ctr[j] = _philox4x64round(ctr[j], keys[r]);
        for (int j = 0; j < m; j++) {
            const int64_t *k = n[i0 + j];
            double *out = w[i0 + j];
            if (k[0] == 0 && k[1] == 0 && k[2] == 0) {
                for (int i = 0; i < 6; i++) out[i] = 0.0;
                continue;
            }
            int c = polar(ctr[j].v, 0, canon[j], amp, flip, out);
            int64_t sg = canon[j] ? 1 : -1;
            for (uint64_t round = 1; c < 3; round++) { /* about one mode in five needs a second block */
                uint64_t b[4];
                hx_rng_bits(seed, stream, sg * k[0], sg * k[1], sg * k[2], round, b);
                c = polar(b, c, canon[j], amp, flip, out);
            }
        }
    }
}
