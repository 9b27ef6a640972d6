/* io_digest.h — internal to io: the checksum every field dataset carries.
 *
 * digest = sum over elements i (file order, i = (z Ny + y) Nx + x) of
 *          mix(word_i XOR (i * 0x9E3779B97F4A7C15)) modulo 2^64,
 * word_i the element's little-endian bits (a float's 32 bits zero-extended), mix the SplitMix64
 * finaliser (Steele, Lea and Flood 2014). A sum is the same for any split of the elements over
 * ranks, so it is reduced with MPI_SUM and recomputed by any reader (numpy: a few lines); the
 * index in the key makes moved elements count, and one flipped bit changes every bit of its
 * term. It guards against corruption, not against an adversary. */
#ifndef HX_IO_DIGEST_H
#define HX_IO_DIGEST_H

#include <stddef.h>
#include <stdint.h>
#include <string.h>

#define IO_DIGEST_GOLDEN 0x9E3779B97F4A7C15ULL
#define IO_DIGEST_METHOD                                                                                   \
    "sum mod 2^64 over elements i in file order of splitmix64_finaliser(bits_i xor (i * 0x9E3779B97F4A7C15)), " \
    "bits_i the little-endian value (float32 zero-extended)"

static inline uint64_t io_digest_mix(uint64_t z)
{
    z ^= z >> 30;
    z *= 0xBF58476D1CE4E5B9ULL;
    z ^= z >> 27;
    z *= 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
}

/* The terms of n values of `size` bytes (4 or 8) whose first has file index `first`. */
static inline uint64_t io_digest_add(const void *buf, size_t n, size_t size, uint64_t first)
{
    const unsigned char *p = buf;
    uint64_t s = 0, k = first * IO_DIGEST_GOLDEN;
    if (size == 8)
        for (size_t i = 0; i < n; i++, k += IO_DIGEST_GOLDEN) {
            uint64_t w;
            memcpy(&w, p + 8 * i, 8);
            s += io_digest_mix(w ^ k);
        }
    else
        for (size_t i = 0; i < n; i++, k += IO_DIGEST_GOLDEN) {
            uint32_t w;
            memcpy(&w, p + 4 * i, 4);
            s += io_digest_mix((uint64_t)w ^ k);
        }
    return s;
}

#endif
