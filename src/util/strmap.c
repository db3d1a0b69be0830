/* Open-addressing string -> int map (FNV-1a hash, linear probing) for node, element and model
 * name lookups; keys are borrowed from the circuit's arena. */
#include <string.h>

#include "util/util.h"

static uint64_t hash_str(const char *s)
{
    uint64_t h = 1469598103934665603ull;
    for (; *s; s++) {
        h ^= (unsigned char)*s;
        h *= 1099511628211ull;
    }
    return h;
}

int strmap_get(const ss_strmap *m, const char *key, int *out_val)
{
    if (m->cap == 0)
        return 0;
    size_t mask = m->cap - 1;
    for (size_t i = (size_t)hash_str(key) & mask;; i = (i + 1) & mask) {
        if (!m->keys[i])
            return 0;
        if (strcmp(m->keys[i], key) == 0) {
            if (out_val)
                *out_val = m->vals[i];
            return 1;
        }
    }
}

static int strmap_grow(ss_strmap *m)
{
    size_t ncap = m->cap ? m->cap * 2 : 64;
    const char **nk = ss_alloc(ncap * sizeof *nk);
    int *nv = ss_alloc(ncap * sizeof *nv);
    if (!nk || !nv) {
        ss_free(nk);
        ss_free(nv);
        return -1;
    }
    for (size_t j = 0; j < m->cap; j++) {
        if (!m->keys[j])
            continue;
        size_t i = (size_t)hash_str(m->keys[j]) & (ncap - 1);
        while (nk[i])
            i = (i + 1) & (ncap - 1);
        nk[i] = m->keys[j];
        nv[i] = m->vals[j];
    }
    ss_free(m->keys);
    ss_free(m->vals);
    m->keys = nk;
    m->vals = nv;
    m->cap = ncap;
    return 0;
}

int strmap_put(ss_strmap *m, const char *key, int val)
{
    if ((m->count + 1) * 2 > m->cap && strmap_grow(m) != 0)
        return -1;
    size_t mask = m->cap - 1;
    size_t i = (size_t)hash_str(key) & mask;
    while (m->keys[i]) {
        if (strcmp(m->keys[i], key) == 0) {
            m->vals[i] = val;
            return 0;
        }
        i = (i + 1) & mask;
    }
    m->keys[i] = key;
    m->vals[i] = val;
    m->count++;
    return 0;
}

void strmap_clear(ss_strmap *m)
{
    ss_free(m->keys);
    ss_free(m->vals);
    memset(m, 0, sizeof *m);
}
