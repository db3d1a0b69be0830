/* SHA-256 (FIPS PUB 180-4), incremental: init, update any number of times, final. */
#ifndef SS_SHA256_H
#define SS_SHA256_H

#include <stddef.h>
#include <stdint.h>

#include "util/util.h"

typedef struct sha256_ctx {
    uint32_t h[8];
    uint64_t n_bytes;
    unsigned char buf[64];
    size_t n_buf;
} sha256_ctx;

SS_HIDDEN void sha256_init(sha256_ctx *c);
SS_HIDDEN void sha256_update(sha256_ctx *c, const void *data, size_t len);
/* Writes the 32-byte digest; c must be initialised again before reuse. */
SS_HIDDEN void sha256_final(sha256_ctx *c, unsigned char out[32]);
/* The digest as 64 lower-case hexadecimal digits and a NUL. */
SS_HIDDEN void sha256_hex(const unsigned char digest[32], char out[65]);

#endif
