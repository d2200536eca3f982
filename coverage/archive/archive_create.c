/* `shoal import`'s choice of target: an existing archive is appended to in place (one
 * transaction); a new archive is built beside the target and linked into place only if no file
 * appeared there meanwhile, so a failed or concurrent import never removes a file it did not
 * make. See LICENSE. */
#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sqlite3.h>
#include <unistd.h>

#include "coverage/archive/archive.h"

/* An import that lost the race to create the archive appends to the winner's; after this many
 * rounds something else keeps making and removing the file, and the import stops. */
#define CREATE_ATTEMPTS 4

char *cov_sqlite_filename(const char *path)
{
    /* SQLite (built with URI names, as Debian's is) reads "file:..." as a URI, where
     * "?mode=memory" would keep everything in memory: "./" makes it a plain file name. */
    int uri = strncmp(path, "file:", 5) == 0;
    size_t len = strlen(path);
    char *out = malloc(len + 3);
    if (out == NULL) return NULL;
    snprintf(out, len + 3, "%s%s", uri ? "./" : "", path);
    return out;
}

int cov_archive_explain_journal(sqlite3 *db, const char *path, cov_error *err)
{
    int code = sqlite3_errcode(db);
    if (code != SQLITE_READONLY && code != SQLITE_CANTOPEN && code != SQLITE_BUSY) return COV_OK;
    size_t len = strlen(path) + 16;
    char *journal = malloc(len);
    if (journal == NULL) return COV_OK;
    snprintf(journal, len, "%s-journal", path);
    struct stat sb;
    int hot = stat(journal, &sb) == 0 && sb.st_size > 0;
    free(journal);
    if (!hot) return COV_OK;
    /* SQLite rolls a hot journal back only on a connection that may write; analysis opens the
     * archive read-only and leaves the file alone, so it explains instead. */
    return cov_fail(err, COV_EINPUT, path, "found an unfinished write: the rollback journal "
                    "'%s-journal' was left by an import (or another program) stopped while "
                    "writing. The archive's committed data are intact. Any program that opens it "
                    "for writing rolls the unfinished part back, e.g. `sqlite3 '%s' 'PRAGMA "
                    "quick_check'` or the next `shoal import` into it; analysis opens archives "
                    "read-only and does not", path, path);
}

/* The directory part of path ("." when it has none) and a temporary name beside it. */
static char *sibling_template(const char *path)
{
    const char *slash = strrchr(path, '/');
    const char *base = slash ? slash + 1 : path;
    size_t dir_len = slash ? (size_t)(slash - path) + 1 : 0;
    size_t len = dir_len + strlen(base) + 32;
    char *out = malloc(len);
    if (out == NULL) return NULL;
    snprintf(out, len, "%.*s.%s.shoal-new.XXXXXX", (int)dir_len, path, base);
    return out;
}

/* Make the directory entry of a new file durable (POSIX leaves it to fsync of the directory). */
static void sync_dir_of(const char *path)
{
    const char *slash = strrchr(path, '/');
    char dir[4096];
    if (slash == NULL) snprintf(dir, sizeof dir, ".");
    else if (slash == path) snprintf(dir, sizeof dir, "/");
    else if ((size_t)(slash - path) < sizeof dir) snprintf(dir, sizeof dir, "%.*s",
                                                           (int)(slash - path), path);
    else return;
    int fd = open(dir, O_RDONLY | O_CLOEXEC);
    if (fd >= 0) {
        fsync(fd);
        close(fd);
    }
}

/* Build a new archive in a private file beside db_path, then link it to db_path. *raced is 1 when
 * a file appeared at db_path meanwhile (nothing was changed; the caller appends to it). */
static int create_new(const char *csv_path, const char *db_path, const char *table, int again,
                      long long *batch_id, size_t *rows, cov_import_overlap *ov, int *raced,
                      cov_error *err)
{
    *raced = 0;
    char *tmp = sibling_template(db_path);
    if (tmp == NULL) return cov_fail(err, COV_ENOMEM, db_path, "out of memory");
    int fd = mkstemp(tmp);
    if (fd < 0) {
        int e = errno;
        free(tmp);
        return cov_fail(err, COV_EIO, db_path, "cannot create a new archive beside it: %s",
                        strerror(e));
    }
    /* mkstemp makes the file private; a new archive gets the usual mode under the umask. */
    if (fchmod(fd, cov_new_file_mode()) != 0) {
        int e = errno;
        close(fd);
        unlink(tmp);
        free(tmp);
        return cov_fail(err, COV_EIO, db_path, "cannot set the new archive's mode: %s",
                        strerror(e));
    }
    close(fd);
    char *name = cov_sqlite_filename(tmp);
    int rc = name == NULL ? cov_fail(err, COV_ENOMEM, db_path, "out of memory")
                          : cov_import_into(csv_path, name, table, again, batch_id, rows, ov,
                                            err);
    free(name);
    if (rc == COV_OK) {
        /* Messages name the archive the user gave, not the temporary file. */
        if (link(tmp, db_path) == 0) {
            sync_dir_of(db_path);
        } else if (errno == EEXIST) {
            *raced = 1;
        } else {
            rc = cov_fail(err, COV_EIO, db_path, "cannot put the new archive in place: %s",
                          strerror(errno));
        }
    } else if (strstr(err->where, tmp) != NULL || strstr(err->msg, tmp) != NULL) {
        snprintf(err->where, sizeof err->where, "%s", db_path);
    }
    /* The temporary name is ours alone: remove it whatever happened (after a link, db_path keeps
     * the archive). Its journal is gone after a commit or a rollback. */
    unlink(tmp);
    free(tmp);
    return rc;
}

int cov_import_csv(const char *csv_path, const char *db_path, const char *table,
                   long long *batch_id, size_t *rows, cov_error *err)
{
    return cov_import_csv_checked(csv_path, db_path, table, 0, batch_id, rows, NULL, err);
}

int cov_import_csv_checked(const char *csv_path, const char *db_path, const char *table,
                           int again, long long *batch_id, size_t *rows, cov_import_overlap *ov,
                           cov_error *err)
{
    *batch_id = 0;
    *rows = 0;
    if (db_path[0] == '\0')
        return cov_fail(err, COV_EINPUT, "", "--archive was given an empty path, expected the "
                                             "archive's file name");
    if (strcmp(db_path, ":memory:") == 0)
        return cov_fail(err, COV_EINPUT, db_path, "found SQLite's name for an in-memory "
                        "database, expected an archive file (nothing would be kept)");
    for (int attempt = 0; attempt < CREATE_ATTEMPTS; attempt++) {
        struct stat sb;
        if (stat(db_path, &sb) == 0) {
            if (!S_ISREG(sb.st_mode))
                return cov_fail(err, COV_EINPUT, db_path, "found %s, expected an archive file "
                                "(or a new name)", cov_file_kind(sb.st_mode));
            char *name = cov_sqlite_filename(db_path);
            if (name == NULL) return cov_fail(err, COV_ENOMEM, db_path, "out of memory");
            int rc = cov_import_into(csv_path, name, table, again, batch_id, rows, ov, err);
            free(name);
            return rc;
        }
        if (errno != ENOENT)
            return cov_fail(err, COV_EIO, db_path, "cannot inspect the archive: %s",
                            strerror(errno));
        if (lstat(db_path, &sb) == 0)
            return cov_fail(err, COV_EINPUT, db_path, "found a symbolic link to a missing file, "
                            "expected an archive file (or a new name)");
        int raced = 0;
        int rc = create_new(csv_path, db_path, table, again, batch_id, rows, ov, &raced, err);
        if (rc != COV_OK || !raced) return rc;
    }
    return cov_fail(err, COV_EIO, db_path, "the archive kept appearing and disappearing while "
                    "importing; nothing was imported");
}
