/* Safe file handling shared by every reader and writer: inputs must be regular files (so a FIFO or
 * device cannot hang or feed a command), outputs must not land on an input, a link or a special
 * file, and new files follow the umask. See LICENSE. */
#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "coverage/base/base.h"

const char *cov_file_kind(mode_t mode)
{
    if (S_ISDIR(mode)) return "a directory";
    if (S_ISFIFO(mode)) return "a FIFO (named pipe)";
    if (S_ISCHR(mode)) return "a character device";
    if (S_ISBLK(mode)) return "a block device";
    if (S_ISSOCK(mode)) return "a socket";
    if (S_ISLNK(mode)) return "a symbolic link";
    return "a regular file";
}

int cov_open_regular(const char *path, FILE **out, char *why, size_t why_size)
{
    *out = NULL;
    if (path[0] == '\0') {
        snprintf(why, why_size, "found an empty file name, expected a file");
        errno = 0;
        return -1;
    }
    /* O_NONBLOCK: opening a FIFO that has no writer would otherwise block before fstat. */
    int fd = open(path, O_RDONLY | O_NONBLOCK | O_CLOEXEC | O_NOCTTY);
    if (fd < 0) {
        snprintf(why, why_size, "%s", strerror(errno));
        return -1;
    }
    struct stat sb;
    if (fstat(fd, &sb) != 0) {
        int e = errno;
        snprintf(why, why_size, "%s", strerror(e));
        close(fd);
        errno = e;
        return -1;
    }
    if (!S_ISREG(sb.st_mode)) {
        snprintf(why, why_size, "found %s, expected a regular file", cov_file_kind(sb.st_mode));
        close(fd);
        errno = 0;
        return -1;
    }
    int flags = fcntl(fd, F_GETFL);
    if (flags < 0 || fcntl(fd, F_SETFL, flags & ~O_NONBLOCK) != 0 ||
        (*out = fdopen(fd, "rb")) == NULL) {
        int e = errno;
        snprintf(why, why_size, "%s", strerror(e));
        close(fd);
        errno = e;
        return -1;
    }
    return 0;
}

int cov_output_check(const char *path, int want_dir, const char *const *inputs, size_t n_inputs,
                     const char *option, cov_error *err)
{
    if (path == NULL || path[0] == '\0')
        return cov_fail(err, COV_EINPUT, "", "%s was given an empty path, expected a %s", option,
                        want_dir ? "directory" : "file name");
    struct stat sb;
    if (lstat(path, &sb) != 0) {
        if (errno == ENOENT) return COV_OK;
        return cov_fail(err, COV_EIO, path, "cannot inspect the %s path: %s", option,
                        strerror(errno));
    }
    /* A link is not followed: replacing it would cut it, writing through it would put the output
     * wherever it points. Either surprises; the user names the file itself. */
    if (S_ISLNK(sb.st_mode))
        return cov_fail(err, COV_EINPUT, path, "%s names a symbolic link, expected the path of the "
                        "%s itself", option, want_dir ? "directory" : "file");
    if (want_dir ? !S_ISDIR(sb.st_mode) : !S_ISREG(sb.st_mode))
        return cov_fail(err, COV_EINPUT, path, "%s names %s, expected %s", option,
                        cov_file_kind(sb.st_mode), want_dir ? "a directory (or a new name)"
                                                            : "a regular file (or a new name)");
    for (size_t i = 0; i < n_inputs; i++) {
        struct stat si;
        if (inputs[i] == NULL || stat(inputs[i], &si) != 0) continue;
        if (si.st_dev == sb.st_dev && si.st_ino == sb.st_ino)
            return cov_fail(err, COV_EINPUT, path, "%s names %s, an input of this command; "
                            "expected a path of its own for the output", option, inputs[i]);
    }
    return COV_OK;
}

mode_t cov_new_file_mode(void)
{
    /* umask can only be read by setting it; the process is single-threaded here. */
    mode_t mask = umask(0);
    umask(mask);
    return 0666 & ~mask;
}
