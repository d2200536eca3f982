/* The counting allocator of the fault build (tests/fault/fault_alloc.c). See LICENSE. */
#ifndef SHOAL_FAULT_H
#define SHOAL_FAULT_H

#include <stddef.h>

/* Fail the k-th allocation from now on (once); 0: never. Resets the count. */
void fault_arm(unsigned long k);
/* Allocations counted since fault_arm; whether the armed failure happened. */
unsigned long fault_count(void);
int fault_fired(void);
/* Distinct call sites that have been made to fail so far. */
size_t fault_sites(void);
/* Route SQLite's allocations through the same counter (before SQLite is first used). */
int fault_route_sqlite(void);

#endif
