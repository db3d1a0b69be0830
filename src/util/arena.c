/* Arena allocator for netlist-lifetime data (names, models, parameter blocks): allocations
 * are never freed one by one, the whole arena is cleared with its circuit. */
#include <string.h>

#include "util/util.h"

struct ss_arena_block {
    ss_arena_block *next;
    size_t used, cap;
    _Alignas(16) unsigned char data[];
};

#define ARENA_BLOCK_MIN 65536u

void *arena_alloc(ss_arena *a, size_t size)
{
    void *p = arena_alloc_raw(a, size, 16);
    if (p)
        memset(p, 0, size);
    return p;
}

void *arena_alloc_raw(ss_arena *a, size_t size, size_t align)
{
    ss_arena_block *b = a->head;
    size_t start = b ? (b->used + align - 1) & ~(align - 1) : 0;
    if (!b || start + size > b->cap) {
        size_t cap = size > ARENA_BLOCK_MIN ? size : ARENA_BLOCK_MIN;
        ss_arena_block *nb = ss_alloc(sizeof *nb + cap);
        if (!nb)
            return NULL;
        nb->cap = cap;
        nb->next = a->head;
        a->head = nb;
        b = nb;
        start = 0; /* data[] is 16-byte aligned */
    }
    void *p = b->data + start;
    b->used = start + size;
    return p;
}

char *arena_strndup(ss_arena *a, const char *s, size_t n)
{
    char *d = arena_alloc_raw(a, n + 1, 1);
    if (d) {
        memcpy(d, s, n);
        d[n] = '\0';
    }
    return d;
}

char *arena_strdup(ss_arena *a, const char *s) { return arena_strndup(a, s, strlen(s)); }

void arena_clear(ss_arena *a)
{
    ss_arena_block *b = a->head;
    while (b) {
        ss_arena_block *next = b->next;
        ss_free(b);
        b = next;
    }
    a->head = NULL;
}
