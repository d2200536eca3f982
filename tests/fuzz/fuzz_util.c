/* Scratch files for the fuzz harnesses (see fuzz.h). See LICENSE. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "tests/fuzz/fuzz.h"

static char dir[4096];
static char file_path[4200], db_path[4200], journal_path[4300];

static void cleanup(void)
{
    if (file_path[0]) unlink(file_path);
    fuzz_scratch_db_remove();
    if (dir[0]) rmdir(dir);
}

static int ensure_dir(void)
{
    if (dir[0]) return 0;
    const char *t = getenv("TMPDIR");
    snprintf(dir, sizeof dir, "%s/shoal-fuzz.XXXXXX", t && *t ? t : "/tmp");
    if (mkdtemp(dir) == NULL) {
        dir[0] = '\0';
        return -1;
    }
    snprintf(db_path, sizeof db_path, "%s/archive.db", dir);
    snprintf(journal_path, sizeof journal_path, "%s-journal", db_path);
    atexit(cleanup);
    return 0;
}

const char *fuzz_scratch(const char *suffix, const uint8_t *data, size_t size)
{
    if (ensure_dir()) return NULL;
    snprintf(file_path, sizeof file_path, "%s/input%s", dir, suffix);
    FILE *f = fopen(file_path, "wb");
    if (f == NULL) return NULL;
    int bad = size > 0 && fwrite(data, 1, size, f) != size;
    bad |= fclose(f) != 0;
    return bad ? NULL : file_path;
}

const char *fuzz_scratch_db(void)
{
    return ensure_dir() ? NULL : db_path;
}

void fuzz_scratch_db_remove(void)
{
    if (db_path[0]) {
        unlink(db_path);
        unlink(journal_path);
    }
}
