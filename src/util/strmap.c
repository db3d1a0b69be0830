/* Open-addressing string -> int map (FNV-1a hash, linear probing, the full hash kept beside
 * each key so a probe rarely touches the string) for node, element and model name lookups;
 * keys are borrowed from the circuit's arena. */
#include <string.h>

#include "util/util.h"

static uint32_t hash_str(const char *s)
{
    uint64_t h = 1469598103934665603ull;
    for (; *s; s++) {
        h ^= (unsigned char)*s;
        h *= 1099511628211ull;
    }
    /* mix (the 64-bit finalizer of MurmurHash3, A. Appleby -- from memory): FNV-1a alone
     * leaves names that differ only in their last digits clustered in the low bits the
     * table index uses */
    h ^= h >> 33;
    h *= 0xff51afd7ed558ccdull;
    h ^= h >> 33;
    h *= 0xc4ceb9fe1a85ec53ull;
    h ^= h >> 33;
    return (uint32_t)h;
}

/* The bucket of a tag in a table of cap = 2^k entries: the top k bits of the tag times the
 * 32-bit golden ratio (multiplicative hashing), so resizing needs only the stored tag. */
static size_t bucket(uint32_t tag, size_t cap)
{
    int k = __builtin_ctzll((unsigned long long)cap);
    uint32_t mixed = tag * 0x9E3779B1u;
    return k == 0 ? 0 : (size_t)(mixed >> (32 - k));
}

int strmap_get(const ss_strmap *m, const char *key, int *out_val)
{
    if (m->cap == 0)
        return 0;
    uint32_t h = hash_str(key);
    size_t mask = m->cap - 1;
    for (size_t i = bucket(h, m->cap);; i = (i + 1) & mask) {
        const ss_strmap_entry *e = &m->e[i];
        if (!e->key)
            return 0;
        if (e->tag == h && strcmp(e->key, key) == 0) {
            if (out_val)
                *out_val = e->val;
            return 1;
        }
    }
}

void strmap_prefetch(const ss_strmap *m, const char *key)
{
    if (m->cap)
        __builtin_prefetch(&m->e[bucket(hash_str(key), m->cap)]);
}

static int strmap_resize(ss_strmap *m, size_t ncap);

static int strmap_grow(ss_strmap *m) { return strmap_resize(m, m->cap ? m->cap * 2 : 64); }

int strmap_reserve(ss_strmap *m, size_t n)
{
    size_t cap = 64;
    while (cap < 2 * n)
        cap *= 2;
    return cap > m->cap ? strmap_resize(m, cap) : 0;
}

static int strmap_resize(ss_strmap *m, size_t ncap)
{
    if (ncap > ((size_t)1 << 32)) /* bucket() takes 32-bit tags */
        return -1;
    ss_strmap_entry *ne = ss_alloc(ncap * sizeof *ne);
    if (!ne)
        return -1;
    for (size_t j = 0; j < m->cap; j++) {
        if (!m->e[j].key)
            continue;
        size_t i = bucket(m->e[j].tag, ncap);
        while (ne[i].key)
            i = (i + 1) & (ncap - 1);
        ne[i] = m->e[j];
    }
    ss_free(m->e);
    m->e = ne;
    m->cap = ncap;
    return 0;
}

int strmap_put(ss_strmap *m, const char *key, int val)
{
    if ((m->count + 1) * 2 > m->cap && strmap_grow(m) != 0)
        return -1;
    uint32_t h = hash_str(key);
    size_t mask = m->cap - 1;
    size_t i = bucket(h, m->cap);
    while (m->e[i].key) {
        if (m->e[i].tag == h && strcmp(m->e[i].key, key) == 0) {
            m->e[i].val = val;
            return 0;
        }
        i = (i + 1) & mask;
    }
    m->e[i].tag = h;
    m->e[i].key = key;
    m->e[i].val = val;
    m->count++;
    return 0;
}

void strmap_clear(ss_strmap *m)
{
    ss_free(m->e);
    memset(m, 0, sizeof *m);
}
