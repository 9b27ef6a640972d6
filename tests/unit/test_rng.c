/* test_rng.c — per-mode draws: the generator is Philox4x64-10 bit for bit, draws are keyed on
 * the wavevector only, Hermitian pairs are exact conjugates, and the Gaussian and fixed
 * amplitudes have the moments the spectrum normalisation assumes. */
#include <complex.h>
#include <math.h>
#include <stdint.h>

#include <Random123/philox.h>

#include "helmix/rng.h"
#include "hx_test.h"

/* Known-answer vectors of Philox4x64-10 (ctr[4], key[2] -> out[4]) from the kat_vectors file
 * of the Random123 distribution (Salmon et al. 2011, Proc. SC'11). helmix fixes the second key
 * word, so the library function is checked through the same Random123 call it makes, and
 * hx_rng_bits is checked against that call below. */
static void test_known_answers(void)
{
    static const uint64_t kat[3][10] = {
        {0, 0, 0, 0, 0, 0, 0x16554d9eca36314cULL, 0xdb20fe9d672d0fdcULL, 0xd7e772cee186176bULL, 0x7e68b68aec7ba23bULL},
        {~0ULL, ~0ULL, ~0ULL, ~0ULL, ~0ULL, ~0ULL, 0x87b092c3013fe90bULL, 0x438c3c67be8d0224ULL, 0x9cc7d7c69cd777b6ULL,
         0xa09caebf594f0ba0ULL},
        {0x243f6a8885a308d3ULL, 0x13198a2e03707344ULL, 0xa4093822299f31d0ULL, 0x082efa98ec4e6c89ULL, 0x452821e638d01377ULL,
         0xbe5466cf34e90c6cULL, 0xa528f45403e61d95ULL, 0x38c72dbd566e9788ULL, 0xa5a1610e72fd18b5ULL, 0x57bd43b5e52b7fe6ULL},
    };
    for (int t = 0; t < 3; t++) {
        const uint64_t *v = kat[t];
        philox4x64_ctr_t ctr = {{v[0], v[1], v[2], v[3]}};
        philox4x64_key_t key = {{v[4], v[5]}};
        philox4x64_ctr_t r = philox4x64_R(10, ctr, key);
        for (int i = 0; i < 4; i++) CHECK(r.v[i] == v[6 + i]);
    }
    /* hx_rng_bits is that generator with key (seed, helmix's domain word) and counter (n, round) */
    uint64_t out[4];
    hx_rng_bits(42, 0, 3, -4, 5, 1, out);
    philox4x64_ctr_t ctr = {{3, (uint64_t)-4, 5, 1}};
    philox4x64_key_t key = {{42, 0x68656c6d69780001ULL}};
    philox4x64_ctr_t r = philox4x64_R(10, ctr, key);
    for (int i = 0; i < 4; i++) CHECK(out[i] == r.v[i]);
    /* another stream (the density's, 1) puts its number in the upper half of the domain word:
     * a different key, so different bits, and the velocity stream 0 keeps the key above */
    uint64_t dens[4];
    hx_rng_bits(42, 1, 3, -4, 5, 1, dens);
    key.v[1] ^= 1ULL << 32;
    r = philox4x64_R(10, ctr, key);
    for (int i = 0; i < 4; i++) CHECK(dens[i] == r.v[i] && dens[i] != out[i]);
}

/* Hermitian symmetry w(-n) = conj(w(n)) must hold exactly for a real field (common practice). */
static void test_hermitian(void)
{
    int ok = 1;
    for (int64_t x = -3; x <= 3; x++)
        for (int64_t y = -3; y <= 3; y++)
            for (int64_t z = -3; z <= 3; z++) {
                double a[6], b[6];
                hx_rng_vector(7, 0, x, y, z, HX_AMP_GAUSSIAN, 0, a);
                hx_rng_vector(7, 0, -x, -y, -z, HX_AMP_GAUSSIAN, 0, b);
                for (int c = 0; c < 3; c++)
                    if (a[2 * c] != b[2 * c] || a[2 * c + 1] != -b[2 * c + 1]) ok = 0;
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

/* Keys: different seeds and wavevectors give different draws, components differ; flip negates. */
static void test_keying(void)
{
    double a[6], b[6], d[6], e[6];
    hx_rng_vector(1, 0, 3, -2, 5, HX_AMP_GAUSSIAN, 0, a);
    hx_rng_vector(2, 0, 3, -2, 5, HX_AMP_GAUSSIAN, 0, b);
    hx_rng_vector(1, 0, 3, -2, 6, HX_AMP_GAUSSIAN, 0, d);
    hx_rng_vector(1, 0, 3, -2, 5, HX_AMP_GAUSSIAN, 1, e);
    CHECK(a[0] != b[0] && a[0] != d[0] && a[0] != a[2] && a[2] != a[4]);
    int neg = 1;
    for (int i = 0; i < 6; i++) neg &= e[i] == -a[i];
    CHECK(neg);
}

/* The batched draw is the same function as the single one, bit for bit, across batch
 * boundaries, for canonical and conjugate modes, k = 0, both amplitude kinds and flip. */
static void test_batch(void)
{
    enum { M = 157 };
    int64_t n[M][3];
    double w[M][6];
    for (int i = 0; i < M; i++) n[i][0] = i % 7 - 3, n[i][1] = (i / 7) % 5 - 2, n[i][2] = i / 35 - 2;
    for (int amp = 0; amp < 2; amp++)
        for (int flip = 0; flip < 2; flip++) {
            hx_rng_vectors(99, 0, (const int64_t(*)[3])n, M, (hx_amplitudes)amp, flip, w);
            int same = 1;
            for (int i = 0; i < M; i++) {
                double v[6];
                hx_rng_vector(99, 0, n[i][0], n[i][1], n[i][2], (hx_amplitudes)amp, flip, v);
                for (int j = 0; j < 6; j++) same &= v[j] == w[i][j];
            }
            CHECK(same);
        }
}

/* Moments: a complex Gaussian with E|w|^2 = 1 has E w = 0, E w^2 = 0 (circular), and
 * E|w|^4 = 2 (|w|^2 is exponential with mean 1; textbook); components of one mode are
 * uncorrelated (E w_x conj(w_y) = 0). Fixed amplitudes have |w| = 1. Tolerances are 5
 * standard errors for M draws. */
static void test_moments(void)
{
    const int M = 70000;
    double complex s1 = 0, s2 = 0, sxy = 0;
    double m2 = 0, m4 = 0, fixed_dev = 0, tail = 0;
    for (int i = 0; i < M; i++) {
        double w[6], f[6];
        hx_rng_vector(11, 0, 1 + i % 97, i / 97, 3, HX_AMP_GAUSSIAN, 0, w);
        hx_rng_vector(11, 0, 1 + i % 97, i / 97, 3, HX_AMP_FIXED, 0, f);
        for (int c = 0; c < 3; c++) {
            double complex z = w[2 * c] + I * w[2 * c + 1];
            double a2 = creal(z * conj(z));
            s1 += z;
            s2 += z * z;
            m2 += a2;
            m4 += a2 * a2;
            tail += a2 > 1.0;
            fixed_dev = fmax(fixed_dev, fabs(hypot(f[2 * c], f[2 * c + 1]) - 1.0));
        }
        sxy += (w[0] + I * w[1]) * conj(w[2] + I * w[3]);
    }
    double n = 3.0 * M, se = 1.0 / sqrt(n);
    CHECK_CLOSE(cabs(s1) / n, 0.0, 5 * se);
    CHECK_CLOSE(cabs(s2) / n, 0.0, 5 * se);
    CHECK_CLOSE(cabs(sxy) / M, 0.0, 5 / sqrt((double)M));
    CHECK_CLOSE(m2 / n, 1.0, 5 * se);                 /* Var|w|^2 = 1 */
    CHECK_CLOSE(m4 / n, 2.0, 5 * sqrt(20.0) * se);    /* Var|w|^4 = 24 - 4 = 20 */
    CHECK(fixed_dev < 1e-14);
    /* P(|w|^2 > 1) = exp(-1) for the exponential distribution; binomial standard error */
    CHECK_CLOSE(tail / n, exp(-1.0), 5 * sqrt(exp(-1.0) * (1 - exp(-1.0)) / n));
}

int main(void)
{
    test_known_answers();
    test_hermitian();
    test_keying();
    test_batch();
    test_moments();
    return hx_test_finish();
}
