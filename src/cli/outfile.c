/* outfile.c - write a result whole or not at all.
 *
 * A regular file (or a name that does not exist yet) is written to a
 * temporary file in the same folder, flushed to disk with fsync and renamed
 * over the target, so a reader sees either the old file or the new one
 * (the calling sequence of git's lockfile.h, in our own code).  A target
 * that exists and is not a regular file (a terminal, a pipe, /dev/stdout, a
 * device) is written directly and never renamed over.  The whole result is
 * in memory before this is called, so an error in the model found after
 * output began never reaches the file.
 *
 * This is program code, not library code: it blocks signals with
 * sigprocmask, which is process-wide (and unspecified in a process with
 * threads), so it lives in src/cli and runs in the single-threaded
 * program only.  Tests provoke a write fault with the LD_PRELOAD shim
 * tests/shim/writefail.c; the program itself has no test hook.
 */
#define _XOPEN_SOURCE 700 /* realpath */
#include "rigmat_internal.h"
#include "outfile.h"
#include "reentrant.h"
#include "outmode.h"

#include <errno.h>
#include <fcntl.h>
#include <signal.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

/* The reason of the last failure, for a message. */
#define WHY(buf) rigmat_strerror(errno, (buf), sizeof (buf))

static rigmat_status write_all(int fd, const char *data, size_t len, const char *path,
        rigmat_error *err)
{
    char why[RIGMAT_STRERROR_LEN];
    size_t done = 0;

    while (done < len) {
        ssize_t n = write(fd, data + done, len - done);
        if (n < 0) {
            if (errno == EINTR)
                continue;
            return RIGMAT_FAIL(err, RIGMAT_EIO, "cannot write '%s': %s", path, WHY(why));
        }
        done += (size_t)n;
    }
    return RIGMAT_OK;
}

/* A terminal, pipe, device or open stream: written in place. */
static rigmat_status write_direct(const char *path, const char *data, size_t len,
        rigmat_error *err)
{
    char why[RIGMAT_STRERROR_LEN];
    rigmat_status rc;
    const int fd = open(path, O_WRONLY | O_APPEND);

    if (fd < 0)
        return RIGMAT_FAIL(err, RIGMAT_EIO, "cannot open '%s': %s", path, WHY(why));
    rc = write_all(fd, data, len, path, err);
    if (close(fd) != 0 && rc == RIGMAT_OK)
        rc = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot write '%s': %s", path, WHY(why));
    return rc;
}

rigmat_status cli_outfile_write(const char *path, const char *data, size_t len,
        rigmat_error *err)
{
    char why[RIGMAT_STRERROR_LEN];
    struct stat st;
    char *tmp = NULL, *resolved = NULL;
    int fd = -1;
    rigmat_status rc;
    sigset_t block, old;

    /* A symbolic link is never renamed over.  One into /dev or /proc
     * (/dev/stdout -> /proc/self/fd/1) names an open stream: write it
     * directly.  Any other link is followed and its target replaced. */
    if (lstat(path, &st) == 0 && S_ISLNK(st.st_mode)) {
        resolved = realpath(path, NULL);
        if (resolved == NULL || strncmp(path, "/dev/", 5) == 0 ||
                strncmp(path, "/proc/", 6) == 0 || strncmp(resolved, "/dev/", 5) == 0 ||
                strncmp(resolved, "/proc/", 6) == 0) {
            free(resolved);
            return write_direct(path, data, len, err);
        }
        rc = cli_outfile_write(resolved, data, len, err);
        free(resolved);
        return rc;
    }
    if (stat(path, &st) == 0 && !S_ISREG(st.st_mode)) {
        if (S_ISDIR(st.st_mode))
            return RIGMAT_FAIL(err, RIGMAT_EIO, "cannot write '%s': it is a folder", path);
        return write_direct(path, data, len, err);
    }
    tmp = rigmat_outmode_temp(path);
    if (tmp == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    /* A signal between mkstemp and rename must not leave the temporary
     * behind: hold the usual terminating signals until we are done. */
    sigemptyset(&block);
    sigaddset(&block, SIGINT);
    sigaddset(&block, SIGTERM);
    sigaddset(&block, SIGHUP);
    sigprocmask(SIG_BLOCK, &block, &old);
    fd = mkstemp(tmp);
    if (fd < 0) {
        rc = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot create a file beside '%s': %s", path,
                WHY(why));
        goto done;
    }
    rc = write_all(fd, data, len, path, err);
    if (rc == RIGMAT_OK && fsync(fd) != 0)
        rc = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot write '%s': %s", path, WHY(why));
    if (close(fd) != 0 && rc == RIGMAT_OK)
        rc = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot write '%s': %s", path, WHY(why));
    fd = -1;
    if (rc == RIGMAT_OK) {
        if (stat(path, &st) != 0)
            st.st_mode = (mode_t)rigmat_outmode_file();
        if (chmod(tmp, st.st_mode & 07777) != 0 || rename(tmp, path) != 0)
            rc = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot replace '%s': %s", path, WHY(why));
    }
    if (rc != RIGMAT_OK)
        unlink(tmp);
done:
    sigprocmask(SIG_SETMASK, &old, NULL);
    free(tmp);
    return rc;
}

rigmat_status cli_outfile_write_all(const char *const *paths, const char *const *data,
        const size_t *len, size_t n, rigmat_error *err)
{
    char why[RIGMAT_STRERROR_LEN];
    char *tmp[CLI_OUTFILE_MAX];
    struct stat st;
    rigmat_status rc = RIGMAT_OK;
    sigset_t block, old;
    size_t i;

    if (n > CLI_OUTFILE_MAX)
        return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "too many files at once");
    for (i = 0; i < n; i++)
        if (lstat(paths[i], &st) == 0 && !S_ISREG(st.st_mode))
            return RIGMAT_FAIL(err, RIGMAT_EIO, "cannot write '%s': it is not a regular file",
                    paths[i]);
    for (i = 0; i < n; i++)
        tmp[i] = NULL;
    sigemptyset(&block);
    sigaddset(&block, SIGINT);
    sigaddset(&block, SIGTERM);
    sigaddset(&block, SIGHUP);
    sigprocmask(SIG_BLOCK, &block, &old);
    for (i = 0; i < n && rc == RIGMAT_OK; i++) {
        int fd;
        tmp[i] = rigmat_outmode_temp(paths[i]);
        if (tmp[i] == NULL) {
            rc = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
            break;
        }
        fd = mkstemp(tmp[i]);
        if (fd < 0) {
            rc = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot create a file beside '%s': %s", paths[i],
                    WHY(why));
            free(tmp[i]);
            tmp[i] = NULL;
            break;
        }
        rc = write_all(fd, data[i], len[i], paths[i], err);
        if (rc == RIGMAT_OK && fsync(fd) != 0)
            rc = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot write '%s': %s", paths[i], WHY(why));
        if (close(fd) != 0 && rc == RIGMAT_OK)
            rc = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot write '%s': %s", paths[i], WHY(why));
        if (rc == RIGMAT_OK) {
            if (stat(paths[i], &st) != 0)
                st.st_mode = (mode_t)rigmat_outmode_file();
            if (chmod(tmp[i], st.st_mode & 07777) != 0)
                rc = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot write '%s': %s", paths[i], WHY(why));
        }
    }
    /* every file is complete beside its target: now the renames, which
     * write no data */
    for (i = 0; i < n && rc == RIGMAT_OK; i++)
        if (rename(tmp[i], paths[i]) != 0)
            rc = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot replace '%s': %s", paths[i], WHY(why));
        else {
            free(tmp[i]);
            tmp[i] = NULL;
        }
    for (i = 0; i < n; i++)
        if (tmp[i] != NULL) {
            unlink(tmp[i]);
            free(tmp[i]);
        }
    sigprocmask(SIG_SETMASK, &old, NULL);
    return rc;
}
