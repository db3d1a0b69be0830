/* SHA-256 (FIPS PUB 180-4, NIST, 2015): the hashes a run's manifest records of its inputs and
 * outputs, so a reader can tell which files belong together (and check them with sha256sum).
 * What is hashed, and why, is the callers' business. */
#include <string.h>

#include "util/sha256.h"

/* the first 32 bits of the fractional parts of the cube roots of the first 64 primes
 * (FIPS 180-4 sec. 4.2.2) */
static const uint32_t K[64] = {
    0x428a2f98, 0x71374491, 0xb5c0fbcf, 0xe9b5dba5, 0x3956c25b, 0x59f111f1, 0x923f82a4,
    0xab1c5ed5, 0xd807aa98, 0x12835b01, 0x243185be, 0x550c7dc3, 0x72be5d74, 0x80deb1fe,
    0x9bdc06a7, 0xc19bf174, 0xe49b69c1, 0xefbe4786, 0x0fc19dc6, 0x240ca1cc, 0x2de92c6f,
    0x4a7484aa, 0x5cb0a9dc, 0x76f988da, 0x983e5152, 0xa831c66d, 0xb00327c8, 0xbf597fc7,
    0xc6e00bf3, 0xd5a79147, 0x06ca6351, 0x14292967, 0x27b70a85, 0x2e1b2138, 0x4d2c6dfc,
    0x53380d13, 0x650a7354, 0x766a0abb, 0x81c2c92e, 0x92722c85, 0xa2bfe8a1, 0xa81a664b,
    0xc24b8b70, 0xc76c51a3, 0xd192e819, 0xd6990624, 0xf40e3585, 0x106aa070, 0x19a4c116,
    0x1e376c08, 0x2748774c, 0x34b0bcb5, 0x391c0cb3, 0x4ed8aa4a, 0x5b9cca4f, 0x682e6ff3,
    0x748f82ee, 0x78a5636f, 0x84c87814, 0x8cc70208, 0x90befffa, 0xa4506ceb, 0xbef9a3f7,
    0xc67178f2};

static uint32_t ror(uint32_t x, int n) { return (x >> n) | (x << (32 - n)); }

static void compress(uint32_t h[8], const unsigned char *p)
{
    uint32_t w[64];
    for (int t = 0; t < 16; t++)
        w[t] = (uint32_t)p[4 * t] << 24 | (uint32_t)p[4 * t + 1] << 16 |
               (uint32_t)p[4 * t + 2] << 8 | (uint32_t)p[4 * t + 3];
    for (int t = 16; t < 64; t++) {
        uint32_t s0 = ror(w[t - 15], 7) ^ ror(w[t - 15], 18) ^ (w[t - 15] >> 3);
        uint32_t s1 = ror(w[t - 2], 17) ^ ror(w[t - 2], 19) ^ (w[t - 2] >> 10);
        w[t] = w[t - 16] + s0 + w[t - 7] + s1;
    }
    uint32_t a = h[0], b = h[1], c = h[2], d = h[3], e = h[4], f = h[5], g = h[6], k = h[7];
    for (int t = 0; t < 64; t++) {
        uint32_t t1 = k + (ror(e, 6) ^ ror(e, 11) ^ ror(e, 25)) + ((e & f) ^ (~e & g)) + K[t] +
                      w[t];
        uint32_t t2 = (ror(a, 2) ^ ror(a, 13) ^ ror(a, 22)) + ((a & b) ^ (a & c) ^ (b & c));
        k = g;
        g = f;
        f = e;
        e = d + t1;
        d = c;
        c = b;
        b = a;
        a = t1 + t2;
    }
    h[0] += a;
    h[1] += b;
    h[2] += c;
    h[3] += d;
    h[4] += e;
    h[5] += f;
    h[6] += g;
    h[7] += k;
}

void sha256_init(sha256_ctx *c)
{
    /* the first 32 bits of the fractional parts of the square roots of the first 8 primes
     * (FIPS 180-4 sec. 5.3.3) */
    static const uint32_t h0[8] = {0x6a09e667, 0xbb67ae85, 0x3c6ef372, 0xa54ff53a,
                                   0x510e527f, 0x9b05688c, 0x1f83d9ab, 0x5be0cd19};
    memcpy(c->h, h0, sizeof h0);
    c->n_bytes = 0;
    c->n_buf = 0;
}

void sha256_update(sha256_ctx *c, const void *data, size_t len)
{
    const unsigned char *p = data;
    c->n_bytes += len;
    if (c->n_buf > 0) {
        size_t k = 64 - c->n_buf < len ? 64 - c->n_buf : len;
        memcpy(c->buf + c->n_buf, p, k);
        c->n_buf += k;
        p += k;
        len -= k;
        if (c->n_buf < 64)
            return;
        compress(c->h, c->buf);
        c->n_buf = 0;
    }
    for (; len >= 64; p += 64, len -= 64)
        compress(c->h, p);
    memcpy(c->buf, p, len);
    c->n_buf = len;
}

void sha256_final(sha256_ctx *c, unsigned char out[32])
{
    /* padding: a 1 bit, zeros, and the message length in bits as a 64-bit big-endian number
     * (FIPS 180-4 sec. 5.1.1) */
    uint64_t bits = c->n_bytes * 8u;
    unsigned char pad[72] = {0x80};
    size_t n_pad = (c->n_buf < 56 ? 56 : 120) - c->n_buf;
    for (int i = 0; i < 8; i++)
        pad[n_pad + (size_t)i] = (unsigned char)(bits >> (56 - 8 * i));
    sha256_update(c, pad, n_pad + 8);
    for (int i = 0; i < 8; i++) {
        out[4 * i] = (unsigned char)(c->h[i] >> 24);
        out[4 * i + 1] = (unsigned char)(c->h[i] >> 16);
        out[4 * i + 2] = (unsigned char)(c->h[i] >> 8);
        out[4 * i + 3] = (unsigned char)c->h[i];
    }
}

void sha256_hex(const unsigned char digest[32], char out[65])
{
    static const char hex[] = "0123456789abcdef";
    for (int i = 0; i < 32; i++) {
        out[2 * i] = hex[digest[i] >> 4];
        out[2 * i + 1] = hex[digest[i] & 15];
    }
    out[64] = '\0';
}

void ss_sha256_hex(const void *data, size_t len, char out_hex[65])
{
    sha256_ctx c;
    unsigned char d[32];
    sha256_init(&c);
    sha256_update(&c, data, len);
    sha256_final(&c, d);
    sha256_hex(d, out_hex);
}
