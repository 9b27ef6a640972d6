/* test_rng.c — per-mode draws: the generator is Philox4x32-10 bit for bit, draws are keyed on
 * the wavevector only, Hermitian pairs are exact conjugates, and the Gaussian and fixed
 * amplitudes have the moments the spectrum normalisation assumes. */
#include <complex.h>
#include <math.h>
#include <stdint.h>

#include "helmix/rng.h"
#include "hx_test.h"

/* Known-answer vectors of Philox4x32-10 (ctr[4], key[2] -> out[4]), from the kat_vectors file
 * of the Random123 distribution (Salmon et al. 2011, Proc. SC'11). */
static void test_known_answers(void)
{
    static const uint32_t kat[3][10] = {
        {0, 0, 0, 0, 0, 0, 0x6627e8d5, 0xe169c58d, 0xbc57ac4c, 0x9b00dbd8},
        {0xffffffff, 0xffffffff, 0xffffffff, 0xffffffff, 0xffffffff, 0xffffffff, 0x408f276d, 0x41c83b0e, 0xa20bc7c6,
         0x6d5451fd},
        {0x243f6a88, 0x85a308d3, 0x13198a2e, 0x03707344, 0xa4093822, 0x299f31d0, 0xd16cfe09, 0x94fdcceb, 0x5001e420,
         0x24126ea1},
    };
    for (int t = 0; t < 3; t++) {
        const uint32_t *v = kat[t];
        uint64_t seed = (uint64_t)v[4] | ((uint64_t)v[5] << 32);
        uint32_t out[4];
        hx_rng_bits(seed, (int64_t)v[0], (int64_t)v[1], (int64_t)v[2], v[3], out);
        for (int i = 0; i < 4; i++) CHECK(out[i] == v[6 + i]);
    }
}

/* Hermitian symmetry w(-n) = conj(w(n)) must hold exactly for a real field (common practice). */
static void test_hermitian(void)
{
    int ok = 1;
    for (int64_t x = -3; x <= 3; x++)
        for (int64_t y = -3; y <= 3; y++)
            for (int64_t z = -3; z <= 3; z++)
                for (uint32_t c = 0; c < 3; c++) {
                    double a[2], b[2];
                    hx_rng_mode(7, x, y, z, c, HX_AMP_GAUSSIAN, 0, a);
                    hx_rng_mode(7, -x, -y, -z, c, HX_AMP_GAUSSIAN, 0, b);
                    if (a[0] != b[0] || a[1] != -b[1]) ok = 0;
                    if (x == 0 && y == 0 && z == 0 && (a[0] != 0 || a[1] != 0)) ok = 0;
                }
    CHECK(ok);
    /* Exactly one of n, -n is canonical for n != 0. */
    int canon_ok = 1;
    for (int64_t x = -2; x <= 2; x++)
        for (int64_t y = -2; y <= 2; y++)
            for (int64_t z = -2; z <= 2; z++)
                if (x || y || z) canon_ok &= hx_rng_canonical(x, y, z) + hx_rng_canonical(-x, -y, -z) == 1;
    CHECK(canon_ok);
}

/* Keys: different seeds, components and wavevectors give different draws; flip negates. */
static void test_keying(void)
{
    double a[2], b[2], c[2], d[2], e[2];
    hx_rng_mode(1, 3, -2, 5, 0, HX_AMP_GAUSSIAN, 0, a);
    hx_rng_mode(2, 3, -2, 5, 0, HX_AMP_GAUSSIAN, 0, b);
    hx_rng_mode(1, 3, -2, 5, 1, HX_AMP_GAUSSIAN, 0, c);
    hx_rng_mode(1, 3, -2, 6, 0, HX_AMP_GAUSSIAN, 0, d);
    hx_rng_mode(1, 3, -2, 5, 0, HX_AMP_GAUSSIAN, 1, e);
    CHECK(a[0] != b[0] && a[0] != c[0] && a[0] != d[0]);
    CHECK(e[0] == -a[0] && e[1] == -a[1]);
}

/* Moments: a complex Gaussian with E|w|^2 = 1 has E w = 0, E w^2 = 0 (circular), and
 * E|w|^4 = 2 (|w|^2 is exponential with mean 1; textbook). Fixed amplitudes have |w| = 1.
 * Tolerances are 5 standard errors for M draws. */
static void test_moments(void)
{
    const int M = 200000;
    double complex s1 = 0, s2 = 0;
    double m2 = 0, m4 = 0, fixed_dev = 0, tail = 0;
    for (int i = 0; i < M; i++) {
        double w[2], f[2];
        hx_rng_mode(11, 1 + i % 97, i / 97, 3, (uint32_t)(i % 3), HX_AMP_GAUSSIAN, 0, w);
        hx_rng_mode(11, 1 + i % 97, i / 97, 3, (uint32_t)(i % 3), HX_AMP_FIXED, 0, f);
        double complex z = w[0] + I * w[1];
        double a2 = w[0] * w[0] + w[1] * w[1];
        s1 += z;
        s2 += z * z;
        m2 += a2;
        m4 += a2 * a2;
        fixed_dev = fmax(fixed_dev, fabs(hypot(f[0], f[1]) - 1.0));
        tail += a2 > 1.0;
    }
    double se = 1.0 / sqrt((double)M);
    CHECK_CLOSE(cabs(s1) / M, 0.0, 5 * se);
    CHECK_CLOSE(cabs(s2) / M, 0.0, 5 * se);
    CHECK_CLOSE(m2 / M, 1.0, 5 * se);                 /* Var|w|^2 = 1 */
    CHECK_CLOSE(m4 / M, 2.0, 5 * sqrt(20.0) * se);    /* Var|w|^4 = 24 - 4 = 20 */
    CHECK(fixed_dev < 1e-14);
    /* P(|w|^2 > 1) = exp(-1) for the exponential distribution; binomial standard error */
    CHECK_CLOSE(tail / M, exp(-1.0), 5 * sqrt(exp(-1.0) * (1 - exp(-1.0)) / M));
}

int main(void)
{
    test_known_answers();
    test_hermitian();
    test_keying();
    test_moments();
    return hx_test_finish();
}
