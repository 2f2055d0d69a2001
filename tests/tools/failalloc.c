/* failalloc: an LD_PRELOAD library for allocation-failure tests, in the
 * spirit of SQLite's fault-injection tests (each allocation in turn made to
 * fail).  Not part of the program; tests/cli/test_fault_injection.sh builds
 * and uses it.
 *
 * It counts the malloc, calloc and realloc calls made from the steamloft
 * executable itself (our code, linked statically).  Calls from the shared
 * libraries (C library, GSL, netCDF, HDF5) are passed through untouched:
 * they are not ours to make robust (GSL 2.7, for one, dereferences its own
 * failed allocations inside gsl_odeiv2_control_standard_new and
 * gsl_linalg_exponential_ss).
 *
 *   SL_FAIL_ALLOC=N         make the N-th counted allocation fail (N >= 1);
 *                           0 or unset: fail nothing, only count
 *   SL_FAIL_ALLOC_REPORT=F  at exit, write "COUNT LIVE" to F: the number of
 *                           counted allocations and how many of them were
 *                           never freed (our leaks)
 *
 * Test-tool state is kept in file-scope variables (the project's rule of no
 * mutable globals is for the program, not for this tool). */
#define _GNU_SOURCE
#include <link.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

extern void *__libc_malloc(size_t);
extern void *__libc_calloc(size_t, size_t);
extern void *__libc_realloc(void *, size_t);
extern void __libc_free(void *);

enum { MAX_RANGES = 16, TABLE_BITS = 20 };
static uintptr_t range_lo[MAX_RANGES], range_hi[MAX_RANGES];
static int n_ranges = -1;
static long fail_at = 0;
static long counter = 0;
static long live = 0;
static void *table[1u << TABLE_BITS]; /* open addressing; (void *)1 = deleted */
static char report_path[512];

static int add_ranges(struct dl_phdr_info *info, size_t size, void *data)
{
    (void)size;
    (void)data;
    const char *name = info->dlpi_name ? info->dlpi_name : "";
    int ours = name[0] == '\0'; /* the main program */
    if (!ours)
        return 0;
    for (int i = 0; i < info->dlpi_phnum && n_ranges < MAX_RANGES; i++) {
        const ElfW(Phdr) *ph = &info->dlpi_phdr[i];
        if (ph->p_type != PT_LOAD || !(ph->p_flags & PF_X))
            continue;
        range_lo[n_ranges] = info->dlpi_addr + ph->p_vaddr;
        range_hi[n_ranges] = range_lo[n_ranges] + ph->p_memsz;
        n_ranges++;
    }
    return 0;
}

static void write_report(void)
{
    if (report_path[0] == '\0')
        return;
    FILE *f = fopen(report_path, "w");
    if (f) {
        fprintf(f, "%ld %ld\n", counter, live);
        fclose(f);
    }
}

static void init(void)
{
    if (n_ranges >= 0)
        return;
    n_ranges = 0;
    const char *s = getenv("SL_FAIL_ALLOC");
    fail_at = s ? atol(s) : 0;
    const char *r = getenv("SL_FAIL_ALLOC_REPORT");
    if (r && strlen(r) < sizeof report_path) {
        strcpy(report_path, r);
        atexit(write_report);
    }
    dl_iterate_phdr(add_ranges, NULL);
}

static int counted(const void *caller)
{
    uintptr_t a = (uintptr_t)caller;
    for (int i = 0; i < n_ranges; i++)
        if (a >= range_lo[i] && a < range_hi[i])
            return 1;
    return 0;
}

static size_t slot(const void *p)
{
    uintptr_t h = (uintptr_t)p;
    h ^= h >> 17;
    h *= 0x9E3779B97F4A7C15u;
    return (size_t)(h >> (64 - TABLE_BITS));
}

static void remember(void *p)
{
    size_t mask = (1u << TABLE_BITS) - 1;
    for (size_t i = slot(p), k = 0; k <= mask; i = (i + 1) & mask, k++)
        if (table[i] == NULL || table[i] == (void *)1) {
            table[i] = p;
            __atomic_fetch_add(&live, 1, __ATOMIC_RELAXED);
            return;
        }
}

static void forget(void *p)
{
    size_t mask = (1u << TABLE_BITS) - 1;
    for (size_t i = slot(p), k = 0; k <= mask; i = (i + 1) & mask, k++) {
        if (table[i] == NULL)
            return;
        if (table[i] == p) {
            table[i] = (void *)1;
            __atomic_fetch_sub(&live, 1, __ATOMIC_RELAXED);
            return;
        }
    }
}

/* One counted allocation: 1 when it must fail. */
static int must_fail(void)
{
    long n = __atomic_add_fetch(&counter, 1, __ATOMIC_RELAXED);
    return fail_at > 0 && n == fail_at;
}

static int lock_flag;
static void lock(void)
{
    while (__atomic_test_and_set(&lock_flag, __ATOMIC_ACQUIRE))
        ;
}
static void unlock(void) { __atomic_clear(&lock_flag, __ATOMIC_RELEASE); }

void *malloc(size_t n)
{
    init();
    if (!counted(__builtin_return_address(0)))
        return __libc_malloc(n);
    if (must_fail())
        return NULL;
    void *p = __libc_malloc(n);
    if (p) {
        lock();
        remember(p);
        unlock();
    }
    return p;
}

void *calloc(size_t m, size_t n)
{
    if (n_ranges < 0 && m * n <= 4096) {
        /* dl_iterate_phdr may call calloc before init is done. */
        return __libc_calloc(m, n);
    }
    init();
    if (!counted(__builtin_return_address(0)))
        return __libc_calloc(m, n);
    if (must_fail())
        return NULL;
    void *p = __libc_calloc(m, n);
    if (p) {
        lock();
        remember(p);
        unlock();
    }
    return p;
}

void *realloc(void *old, size_t n)
{
    init();
    if (!counted(__builtin_return_address(0))) {
        void *p = __libc_realloc(old, n);
        if (p && old && p != old) {
            lock();
            forget(old);
            unlock();
        }
        return p;
    }
    if (must_fail())
        return NULL;
    void *p = __libc_realloc(old, n);
    if (p || n == 0) {
        lock();
        if (old)
            forget(old);
        if (p)
            remember(p);
        unlock();
    }
    return p;
}

void free(void *p)
{
    if (p) {
        lock();
        forget(p);
        unlock();
    }
    __libc_free(p);
}
