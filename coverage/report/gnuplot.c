/* The gnuplot pipe: finding gnuplot on PATH, quoting user text for it, running a script.
 * See LICENSE. */
#include <errno.h>
#include <fcntl.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "coverage/report/report.h"

/* gnuplot's messages kept for the error text; the rest is read and dropped. */
#define GP_MSG_KEEP 4096
/* dash, Debian's /bin/sh, accepts only one-digit descriptors in a redirection such as 2>&7. */
#define GP_SHELL_MAX_FD 9

int cov_gp_find(char *path, size_t size)
{
    const char *env = getenv("PATH");
    if (env == NULL || size == 0) return -1;
    const char *p = env;
    for (;;) {
        const char *end = strchr(p, ':');
        size_t len = end ? (size_t)(end - p) : strlen(p);
        /* POSIX: an empty PATH entry means the current directory. */
        int n = len == 0 ? snprintf(path, size, "./gnuplot")
                         : snprintf(path, size, "%.*s/gnuplot", (int)len, p);
        struct stat st;
        if (n > 0 && (size_t)n < size && stat(path, &st) == 0 && S_ISREG(st.st_mode)
            && access(path, X_OK) == 0)
            return 0;
        if (end == NULL) break;
        p = end + 1;
    }
    path[0] = '\0';
    return -1;
}

/* Length of the valid UTF-8 sequence at s (RFC 3629 section 4: no overlongs, no surrogates, at most
 * U+10FFFF), or 0 when the bytes there are not one. */
static size_t utf8_len(const unsigned char *s)
{
    if (s[0] < 0x80) return 1;
    if (s[0] >= 0xC2 && s[0] <= 0xDF) return (s[1] & 0xC0) == 0x80 ? 2 : 0;
    if (s[0] >= 0xE0 && s[0] <= 0xEF) {
        unsigned lo = s[0] == 0xE0 ? 0xA0 : 0x80, hi = s[0] == 0xED ? 0x9F : 0xBF;
        return s[1] >= lo && s[1] <= hi && (s[2] & 0xC0) == 0x80 ? 3 : 0;
    }
    if (s[0] >= 0xF0 && s[0] <= 0xF4) {
        unsigned lo = s[0] == 0xF0 ? 0x90 : 0x80, hi = s[0] == 0xF4 ? 0x8F : 0xBF;
        return s[1] >= lo && s[1] <= hi && (s[2] & 0xC0) == 0x80 && (s[3] & 0xC0) == 0x80 ? 4 : 0;
    }
    return 0;
}

/* What a literal is for: text drawn in a plot, the label of an explicit tic, or a file name. */
enum quote_use { QUOTE_TEXT, QUOTE_TIC, QUOTE_PATH };

/* gnuplot does no backquote, macro or backslash processing inside single quotes and reads '' as one
 * quote (gnuplot 5.4 manual, "Syntax" and "Substitution"), so a single-quoted literal carries any
 * text safely once line breaks are gone. Invalid UTF-8 in drawn text would make the SVG output
 * ill-formed, so it is replaced; a file name keeps its bytes, since any other byte names another
 * file (callers refuse names with control characters). */
static void quote(FILE *f, const char *s, enum quote_use use)
{
    fputc('\'', f);
    const unsigned char *p = (const unsigned char *)(s ? s : "");
    while (*p) {
        size_t len = use == QUOTE_PATH ? 1 : utf8_len(p);
        if (len == 0 || *p < 0x20 || *p == 0x7F) {
            fputc('?', f);
            p++;
        } else if (*p == '\'') {
            fputs("''", f);
            p++;
        } else if (*p == '%' && use == QUOTE_TIC) {
            fputs("%%", f);
            p++;
        } else {
            fwrite(p, 1, len, f);
            p += len;
        }
    }
    fputc('\'', f);
}

void cov_gp_quote(FILE *f, const char *s)
{
    quote(f, s, QUOTE_TEXT);
}

/* gnuplot formats the position of an explicit tic through its label, as a printf-like format
 * (gnuplot 5.4, gen_tics: "Bad format character" on a lone '%'), so '%' is doubled there. */
void cov_gp_quote_tic(FILE *f, const char *s)
{
    quote(f, s, QUOTE_TIC);
}

void cov_gp_quote_path(FILE *f, const char *s)
{
    quote(f, s, QUOTE_PATH);
}

/* Write s as a single-quoted shell word: POSIX sh takes all between single quotes literally. */
static void shell_quote(FILE *f, const char *s)
{
    fputc('\'', f);
    for (; *s; s++) {
        if (*s == '\'') fputs("'\\''", f);
        else fputc(*s, f);
    }
    fputc('\'', f);
}

/* Read what is waiting on the non-blocking fd into msg (up to GP_MSG_KEEP bytes kept). */
static void drain(int fd, char *msg, size_t *len)
{
    char buf[1024];
    for (;;) {
        ssize_t r = read(fd, buf, sizeof buf);
        if (r <= 0) {
            if (r < 0 && errno == EINTR) continue;
            return;
        }
        size_t keep = (size_t)r;
        if (*len + keep > GP_MSG_KEEP) keep = GP_MSG_KEEP - *len;
        memcpy(msg + *len, buf, keep);
        *len += keep;
        msg[*len] = '\0';
    }
}

/* The last non-blank line of gnuplot's messages (its error line), control characters flattened. */
static void last_line(const char *msg, char *out, size_t size)
{
    const char *best = NULL;
    size_t best_len = 0;
    for (const char *p = msg; *p;) {
        const char *e = strchr(p, '\n');
        size_t len = e ? (size_t)(e - p) : strlen(p);
        size_t lead = 0;
        while (lead < len && (p[lead] == ' ' || p[lead] == '\t')) lead++;
        if (lead < len) {
            best = p + lead;
            best_len = len - lead;
        }
        if (e == NULL) break;
        p = e + 1;
    }
    size_t n = best ? best_len : 0;
    if (n >= size) n = size - 1;
    for (size_t i = 0; i < n; i++) {
        unsigned char c = (unsigned char)best[i];
        out[i] = c < 0x20 ? ' ' : (char)c;
    }
    out[n] = '\0';
}

int cov_gp_run(const char *script, size_t len, FILE *note, cov_error *err)
{
    char exe[4096];
    if (cov_gp_find(exe, sizeof exe) != 0)
        return cov_fail(err, COV_ENOPLOT, "",
                        "gnuplot was not found on PATH "
                        "(install gnuplot, e.g. Debian's gnuplot-nox)");

    int rc = COV_ENOPLOT;
    int fds[2] = {-1, -1};
    int msg_fd = -1;
    char *cmd = NULL;
    size_t cmd_len = 0;
    FILE *gp = NULL;
    char msg[GP_MSG_KEEP + 1] = "";
    size_t msg_len = 0;
    struct sigaction ignore, saved;
    int sig_saved = 0;

    /* gnuplot's stderr comes back through a pipe so that its error line reaches err; when no
     * descriptor the shell can name is free, its messages are dropped instead. Both ends are
     * non-blocking: a chatty gnuplot then loses messages rather than stalling on a full pipe. */
    if (pipe(fds) == 0) {
        if (fds[1] > GP_SHELL_MAX_FD) {
            close(fds[0]);
            close(fds[1]);
            fds[0] = fds[1] = -1;
        } else {
            fcntl(fds[0], F_SETFD, FD_CLOEXEC);
            fcntl(fds[0], F_SETFL, O_NONBLOCK);
            fcntl(fds[1], F_SETFL, O_NONBLOCK);
            msg_fd = fds[0];
        }
    }

    FILE *cf = open_memstream(&cmd, &cmd_len);
    if (cf == NULL) {
        rc = cov_fail(err, COV_ENOMEM, "", "out of memory starting gnuplot");
        goto fail;
    }
    /* -d: ignore the user's ~/.gnuplot and the system gnuplotrc, so the plots look the same
     * everywhere. stdout goes nowhere: every plot is written to its own file. */
    fputs("exec ", cf);
    shell_quote(cf, exe);
    if (msg_fd >= 0) fprintf(cf, " -d >/dev/null 2>&%d", fds[1]);
    else fputs(" -d >/dev/null 2>/dev/null", cf);
    if (fclose(cf) != 0) {
        cf = NULL;
        rc = cov_fail(err, COV_ENOMEM, "", "out of memory starting gnuplot");
        goto fail;
    }

    /* A gnuplot that dies early would raise SIGPIPE on our next write; a failed write is reported
     * instead, and the caller's handling of SIGPIPE is restored afterwards. */
    memset(&ignore, 0, sizeof ignore);
    ignore.sa_handler = SIG_IGN;
    sigemptyset(&ignore.sa_mask);
    if (sigaction(SIGPIPE, &ignore, &saved) == 0) sig_saved = 1;

    gp = popen(cmd, "w");
    if (fds[1] >= 0) {
        close(fds[1]);
        fds[1] = -1;
    }
    if (gp == NULL) {
        rc = cov_fail(err, COV_ENOPLOT, "", "could not start gnuplot (%s): %s", exe,
                      strerror(errno));
        goto fail;
    }
    const size_t chunk = 1 << 16;
    int write_failed = 0;
    for (size_t off = 0; off < len && !write_failed; off += chunk) {
        size_t n = len - off < chunk ? len - off : chunk;
        if (fwrite(script + off, 1, n, gp) != n) write_failed = 1;
        if (msg_fd >= 0) drain(msg_fd, msg, &msg_len);
    }
    if (fflush(gp) != 0) write_failed = 1;
    int status = pclose(gp);
    gp = NULL;
    if (msg_fd >= 0) {
        /* The pipe's write end closed with gnuplot; make the last read blocking to reach EOF. */
        fcntl(msg_fd, F_SETFL, 0);
        drain(msg_fd, msg, &msg_len);
    }
    char line[600];
    last_line(msg, line, sizeof line);
    if (status == -1) {
        rc = cov_fail(err, COV_ENOPLOT, "", "could not wait for gnuplot: %s", strerror(errno));
        goto fail;
    }
    if (WIFSIGNALED(status)) {
        rc = cov_fail(err, COV_ENOPLOT, "", "gnuplot (%s) was killed by signal %d%s%s", exe,
                      WTERMSIG(status), line[0] ? ": " : "", line);
        goto fail;
    }
    if (!WIFEXITED(status) || WEXITSTATUS(status) != 0 || write_failed) {
        int code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
        rc = cov_fail(err, COV_ENOPLOT, "", "gnuplot (%s) failed with exit status %d%s%s", exe,
                      code, line[0] ? ": " : "", line);
        goto fail;
    }
    /* Success, but gnuplot may have warned (a skipped data set, a missing font): pass it on. */
    if (note != NULL && line[0] != '\0') fprintf(note, "shoal: gnuplot warned: %s\n", line);
    rc = COV_OK;
fail:
    if (sig_saved) sigaction(SIGPIPE, &saved, NULL);
    if (gp != NULL) pclose(gp);
    if (fds[0] >= 0) close(fds[0]);
    if (fds[1] >= 0) close(fds[1]);
    free(cmd);
    return rc;
}
