/* Shared by the fuzz harnesses: a scratch file that each input is written to, for the readers that
 * take a path. See LICENSE. */
#ifndef SHOAL_FUZZ_H
#define SHOAL_FUZZ_H

#include <stddef.h>
#include <stdint.h>

/* The libFuzzer entry point each harness defines; replay.c calls it on saved inputs. */
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* Write data to a scratch file (one per process, made on first use under $TMPDIR or /tmp, removed
 * at exit) with the given suffix, and return its path; NULL when it cannot be written. */
const char *fuzz_scratch(const char *suffix, const uint8_t *data, size_t size);
/* A path for a scratch database beside the scratch files (not created). */
const char *fuzz_scratch_db(void);
/* Remove the scratch database and its journal. */
void fuzz_scratch_db_remove(void);

#endif
