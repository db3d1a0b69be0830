/* Allocation wrappers: one place to count allocations and to make the n-th one fail in tests.
 * Leaves ownership rules to the callers (create/destroy pairs). */
#define _DEFAULT_SOURCE /* madvise, MAP_ANONYMOUS */
#include <malloc.h> /* malloc_usable_size */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>

#include <suitesparse/SuiteSparse_config.h>

#include "util/util.h"

/* Relaxed atomics: study workers allocate from several threads at once, and the counter and
 * the failure ordinal are test hooks that need no ordering, only no torn or lost updates. */
static long g_alloc_count;
static long g_fail_at = -1;

void ss_alloc_fail_at(long n)
{
    __atomic_store_n(&g_fail_at, n, __ATOMIC_RELAXED);
    __atomic_store_n(&g_alloc_count, 0, __ATOMIC_RELAXED);
}

long ss_alloc_count(void) { return __atomic_load_n(&g_alloc_count, __ATOMIC_RELAXED); }

/* Counts the call and says whether this one is the injected failure. */
static int alloc_should_fail(void)
{
    long ordinal = __atomic_fetch_add(&g_alloc_count, 1, __ATOMIC_RELAXED);
    long fail_at = __atomic_load_n(&g_fail_at, __ATOMIC_RELAXED);
    return fail_at >= 0 && ordinal == fail_at;
}

/* Large blocks -- the matrices, name tables, element records and arena blocks of a circuit of
 * some 10^4 nodes and up -- are mapped directly, 2 MiB-aligned, and the kernel is asked to back
 * them with transparent huge pages. Where huge pages are granted only on request (the common
 * "madvise" setting), every fresh 4 KiB page costs a fault: measured on a virtual machine, 11 us
 * per page, 2.7 ms per MiB, more than a whole KLU factorization of the same circuit; a 2 MiB
 * page costs about 0.2 ms per MiB. Random probes into a name table of many MiB also miss the TLB
 * far less. The kernel may ignore the request; nothing depends on it but time.
 *
 * Such blocks are listed (a few dozen at most) so ss_free and ss_realloc know them; they are
 * always 2 MiB-aligned, so only an aligned pointer needs the lookup. Under AddressSanitizer
 * every block stays with the (instrumented) C library. */
#if defined(__SANITIZE_ADDRESS__)
#define BIG_DIRECT 0
#elif defined(__has_feature)
#if __has_feature(address_sanitizer)
#define BIG_DIRECT 0
#endif
#endif
#if !defined(BIG_DIRECT) && defined(MADV_HUGEPAGE) && defined(MAP_ANONYMOUS)
#define BIG_DIRECT 1
#endif
#ifndef BIG_DIRECT
#define BIG_DIRECT 0
#endif

#define HUGE_PAGE ((size_t)2 << 20)
#define BIG_MIN ((size_t)512 << 10) /* a block this size or larger gets whole 2 MiB pages: at
                                     * most 1.5 MiB of its last page unused, and a circuit has
                                     * only a few dozen arrays this large */

#if BIG_DIRECT
#include <pthread.h>

static size_t round_huge(size_t n) { return (n + HUGE_PAGE - 1) & ~(HUGE_PAGE - 1); }

typedef struct big_block {
    void *p;
    size_t len; /* mapped bytes, a multiple of HUGE_PAGE */
} big_block;

static pthread_mutex_t g_big_lock = PTHREAD_MUTEX_INITIALIZER;
static big_block *g_big;
static size_t g_n_big, g_cap_big;

static int big_register(void *p, size_t len)
{
    pthread_mutex_lock(&g_big_lock);
    int ok = 1;
    if (g_n_big == g_cap_big) {
        size_t ncap = g_cap_big ? 2 * g_cap_big : 32;
        big_block *nb = realloc(g_big, ncap * sizeof *nb);
        if (nb) {
            g_big = nb;
            g_cap_big = ncap;
        } else {
            ok = 0;
        }
    }
    if (ok)
        g_big[g_n_big++] = (big_block){p, len};
    pthread_mutex_unlock(&g_big_lock);
    return ok;
}

/* Removes p from the list when it is a big block; its mapped length, or 0. */
static size_t big_unregister(void *p)
{
    size_t len = 0;
    pthread_mutex_lock(&g_big_lock);
    for (size_t i = 0; i < g_n_big; i++)
        if (g_big[i].p == p) {
            len = g_big[i].len;
            g_big[i] = g_big[--g_n_big];
            break;
        }
    if (g_n_big == 0) { /* the last one: give the list back too (leak checkers) */
        free(g_big);
        g_big = NULL;
        g_cap_big = 0;
    }
    pthread_mutex_unlock(&g_big_lock);
    return len;
}

static size_t big_len(void *p)
{
    size_t len = 0;
    if (((uintptr_t)p & (HUGE_PAGE - 1)) != 0)
        return 0;
    pthread_mutex_lock(&g_big_lock);
    for (size_t i = 0; i < g_n_big && !len; i++)
        if (g_big[i].p == p)
            len = g_big[i].len;
    pthread_mutex_unlock(&g_big_lock);
    return len;
}

/* A zeroed, 2 MiB-aligned mapping of at least size bytes; NULL when the system refuses. */
static void *big_map(size_t size)
{
    size_t len = round_huge(size);
    if (len < size || len + HUGE_PAGE < len)
        return NULL;
    char *base = mmap(NULL, len + HUGE_PAGE, PROT_READ | PROT_WRITE,
                      MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
    if (base == MAP_FAILED)
        return NULL;
    char *p = (char *)(((uintptr_t)base + HUGE_PAGE - 1) & ~(uintptr_t)(HUGE_PAGE - 1));
    if (p > base)
        munmap(base, (size_t)(p - base));
    size_t tail = (size_t)(base + len + HUGE_PAGE - (p + len));
    if (tail > 0)
        munmap(p + len, tail);
    (void)madvise(p, len, MADV_HUGEPAGE);
    if (!big_register(p, len)) {
        munmap(p, len);
        return NULL;
    }
    return p;
}
#endif

/* The allocation itself, without the failure injection: ss_alloc and friends, and the memory
 * functions handed to SuiteSparse (klu_factor's LU factors are the largest blocks of all). */
static void *sys_calloc(size_t size)
{
#if BIG_DIRECT
    if (size >= BIG_MIN) {
        void *p = big_map(size);
        if (p)
            return p;
    }
#endif
    return calloc(1, size ? size : 1);
}

static void *sys_realloc(void *p, size_t size)
{
#if BIG_DIRECT
    size_t len = p ? big_len(p) : 0;
    if (len > 0) {
        if (size <= len && size >= len / 4)
            return p; /* still fits, and not much too large */
        void *q = size >= BIG_MIN ? big_map(size) : malloc(size ? size : 1);
        if (!q)
            return NULL;
        memcpy(q, p, size < len ? size : len);
        big_unregister(p);
        munmap(p, len);
        return q;
    }
    if (size >= BIG_MIN) { /* growing into a big block: copy what the old one held */
        size_t old = p ? malloc_usable_size(p) : 0;
        void *q = big_map(size);
        if (q) {
            if (p) {
                memcpy(q, p, old < size ? old : size);
                free(p);
            }
            return q;
        }
    }
#endif
    return realloc(p, size ? size : 1);
}

static void sys_free(void *p)
{
#if BIG_DIRECT
    if (p && ((uintptr_t)p & (HUGE_PAGE - 1)) == 0) {
        size_t len = big_unregister(p);
        if (len > 0) {
            munmap(p, len);
            return;
        }
    }
#endif
    free(p);
}

void *ss_alloc(size_t size) { return alloc_should_fail() ? NULL : sys_calloc(size); }

void *ss_realloc(void *p, size_t size) { return alloc_should_fail() ? NULL : sys_realloc(p, size); }

void ss_free(void *p) { sys_free(p); }

#if BIG_DIRECT
static void *ss_malloc_for_lib(size_t size)
{
    return size >= BIG_MIN ? sys_calloc(size) : malloc(size ? size : 1);
}
static void *ss_calloc_for_lib(size_t n, size_t size)
{
    return size && n > SIZE_MAX / size ? NULL : sys_calloc(n * size);
}
static void once_memory_functions(void)
{
    /* only when nobody in the process chose other functions already; SuiteSparse 7 hides the
     * struct behind getters and setters */
#if defined(SUITESPARSE_MAIN_VERSION) && SUITESPARSE_MAIN_VERSION >= 7
    if (SuiteSparse_config_malloc_func_get() == malloc &&
        SuiteSparse_config_calloc_func_get() == calloc &&
        SuiteSparse_config_realloc_func_get() == realloc &&
        SuiteSparse_config_free_func_get() == free) {
        SuiteSparse_config_malloc_func_set(ss_malloc_for_lib);
        SuiteSparse_config_calloc_func_set(ss_calloc_for_lib);
        SuiteSparse_config_realloc_func_set(sys_realloc);
        SuiteSparse_config_free_func_set(sys_free);
    }
#else
    if (SuiteSparse_config.malloc_func == malloc && SuiteSparse_config.calloc_func == calloc &&
        SuiteSparse_config.realloc_func == realloc && SuiteSparse_config.free_func == free) {
        SuiteSparse_config.malloc_func = ss_malloc_for_lib;
        SuiteSparse_config.calloc_func = ss_calloc_for_lib;
        SuiteSparse_config.realloc_func = sys_realloc;
        SuiteSparse_config.free_func = sys_free;
    }
#endif
}
#endif

void ss_klu_use_library_memory(void)
{
#if BIG_DIRECT
    static pthread_once_t once = PTHREAD_ONCE_INIT;
    pthread_once(&once, once_memory_functions);
#endif
}

char *ss_strdup(const char *s)
{
    size_t n = strlen(s) + 1;
    char *d = ss_alloc(n);
    if (d)
        memcpy(d, s, n);
    return d;
}
