/* Arena allocator for netlist-lifetime data (names, models, parameter blocks): allocations
 * are never freed one by one, the whole arena is cleared with its circuit. */
#include <string.h>

#include "util/util.h"

struct ss_arena_block {
    ss_arena_block *next;
    size_t used, cap;
    _Alignas(16) unsigned char data[];
};

/* the first block: small, since many arenas hold little (a result table's labels); one of 64 KiB
 * per table made every study trial grow and trim the heap (brk), faulting fresh pages in again */
#define ARENA_BLOCK_MIN 4096u
/* each new block is twice the last, up to this size: a large netlist gets few, large blocks
 * (huge pages, fewer page faults) while at most one partly used block is wasted */
#define ARENA_BLOCK_MAX ((size_t)8 << 20)

/* Under AddressSanitizer every allocation is followed by a poisoned red zone, so an overflow
 * from one arena object into the next is reported like a heap overflow (the fuzz and sanitizer
 * builds); otherwise the red zone is empty and nothing changes. */
#if defined(__SANITIZE_ADDRESS__)
#define ARENA_ASAN 1
#elif defined(__has_feature)
#if __has_feature(address_sanitizer)
#define ARENA_ASAN 1
#endif
#endif
#ifdef ARENA_ASAN
#include <sanitizer/asan_interface.h>
#define ARENA_REDZONE 16u
#define ARENA_POISON(p, n) ASAN_POISON_MEMORY_REGION((p), (n))
#define ARENA_UNPOISON(p, n) ASAN_UNPOISON_MEMORY_REGION((p), (n))
#else
#define ARENA_REDZONE 0u
#define ARENA_POISON(p, n) ((void)(p), (void)(n))
#define ARENA_UNPOISON(p, n) ((void)(p), (void)(n))
#endif

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
    if (!b || start + size + ARENA_REDZONE > b->cap) {
        size_t cap = b ? b->cap * 2 : ARENA_BLOCK_MIN;
        if (cap > ARENA_BLOCK_MAX)
            cap = ARENA_BLOCK_MAX;
        if (cap < size + ARENA_REDZONE)
            cap = size + ARENA_REDZONE;
        ss_arena_block *nb = ss_alloc(sizeof *nb + cap);
        if (!nb)
            return NULL;
        ARENA_POISON(nb->data, cap);
        nb->cap = cap;
        nb->next = a->head;
        a->head = nb;
        b = nb;
        start = 0; /* data[] is 16-byte aligned */
    }
    void *p = b->data + start;
    b->used = start + size + ARENA_REDZONE;
    ARENA_UNPOISON(p, size);
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
        ARENA_UNPOISON(b->data, b->cap);
        ss_free(b);
        b = next;
    }
    a->head = NULL;
}
