/* The counting allocator of the fault build (`make check-faults`): the library is compiled with
 * malloc, calloc, realloc and strdup renamed to these functions (-D on the command line, so the
 * production build has no hook at all), and SQLite's allocations are routed here too; the k-th
 * allocation fails once, as in Lua's test allocator and SQLite's fault simulation. Each failing
 * call site is recorded by its return address. See LICENSE. */
#undef malloc
#undef calloc
#undef realloc
#undef strdup
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <sanitizer/common_interface_defs.h>
#include <sqlite3.h>

#include "tests/fault/fault.h"

static unsigned long count, fail_at;
static int failed;
#define MAX_SITES 4096
static void *sites[MAX_SITES];
static size_t n_sites;

static int should_fail(void *site)
{
    count++;
    if (fail_at == 0 || count != fail_at) return 0;
    failed = 1;
    /* FAULT_TRACE=1: show where each failure is injected (to find a site fault_run reports). */
    if (getenv("FAULT_TRACE") != NULL) {
        fprintf(stderr, "fault: allocation %lu fails here:\n", count);
        __sanitizer_print_stack_trace();
    }
    size_t i = 0;
    while (i < n_sites && sites[i] != site) i++;
    if (i == n_sites && n_sites < MAX_SITES) sites[n_sites++] = site;
    return 1;
}

void fault_arm(unsigned long k)
{
    count = 0;
    fail_at = k;
    failed = 0;
}
unsigned long fault_count(void) { return count; }
int fault_fired(void) { return failed; }
size_t fault_sites(void) { return n_sites; }

void *cov_fault_malloc(size_t n)
{
    return should_fail(__builtin_return_address(0)) ? NULL : malloc(n);
}
void *cov_fault_calloc(size_t n, size_t m)
{
    return should_fail(__builtin_return_address(0)) ? NULL : calloc(n, m);
}
void *cov_fault_realloc(void *p, size_t n)
{
    return should_fail(__builtin_return_address(0)) ? NULL : realloc(p, n);
}
char *cov_fault_strdup(const char *s)
{
    return should_fail(__builtin_return_address(0)) ? NULL : strdup(s);
}

/* SQLite's allocator: the same counter, with the size kept in front of each block
 * (sqlite3_mem_methods, https://sqlite.org/c3ref/mem_methods.html). Sites inside SQLite are
 * counted as one, the allocator itself. */
#define HEAD 16
static void *sq_malloc(int n)
{
    if (should_fail((void *)sq_malloc)) return NULL;
    unsigned char *p = malloc((size_t)n + HEAD);
    if (p == NULL) return NULL;
    memcpy(p, &n, sizeof n);
    return p + HEAD;
}
static void sq_free(void *p)
{
    if (p != NULL) free((unsigned char *)p - HEAD);
}
static int sq_size(void *p)
{
    int n = 0;
    if (p != NULL) memcpy(&n, (unsigned char *)p - HEAD, sizeof n);
    return n;
}
static void *sq_realloc(void *p, int n)
{
    if (should_fail((void *)sq_malloc)) return NULL;
    unsigned char *q = realloc(p ? (unsigned char *)p - HEAD : NULL, (size_t)n + HEAD);
    if (q == NULL) return NULL;
    memcpy(q, &n, sizeof n);
    return q + HEAD;
}
static int sq_roundup(int n) { return (n + 7) & ~7; }
static int sq_init(void *x) { (void)x; return SQLITE_OK; }
static void sq_shutdown(void *x) { (void)x; }

int fault_route_sqlite(void)
{
    static const sqlite3_mem_methods m = {sq_malloc, sq_free, sq_realloc, sq_size, sq_roundup,
                                          sq_init, sq_shutdown, NULL};
    return sqlite3_config(SQLITE_CONFIG_MALLOC, &m);
}
