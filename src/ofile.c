/* ofile.c -- write to a temporary file, rename into place when complete. */
#define _GNU_SOURCE 1 /* O_CLOEXEC in mkostemp is POSIX-2008 anyway; this is for fdatasync */
#include "vecsift/ofile.h"

#include <errno.h>
#include <fcntl.h>
#include <signal.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "vecsift/err.h"
#include "vecsift/xalloc.h"

struct ofile {
    char *path;     /* destination */
    char *tmp;      /* temporary name, NULL for stdout or a device */
    FILE *fp;
    int direct;     /* writing straight to a device, FIFO or socket (not stdout) */
    int slot;       /* index in open_tmp[], -1 for stdout */
};

/* Temporary names still open, for the signal handler.  Written only with
 * signals blocked; read by the handler, which only calls unlink(). */
#define MAX_OPEN 64
static char *volatile open_tmp[MAX_OPEN];

static void block(sigset_t *old)
{
    sigset_t all;
    sigemptyset(&all);
    sigaddset(&all, SIGINT);
    sigaddset(&all, SIGTERM);
    sigaddset(&all, SIGHUP);
    sigprocmask(SIG_BLOCK, &all, old);
}

static void unblock(const sigset_t *old)
{
    sigprocmask(SIG_SETMASK, old, NULL);
}

static int register_tmp(char *tmp)
{
    sigset_t old;
    int slot = -1;
    block(&old);
    for (int i = 0; i < MAX_OPEN; i++)
        if (!open_tmp[i]) {
            open_tmp[i] = tmp;
            slot = i;
            break;
        }
    unblock(&old);
    return slot;
}

static void unregister_tmp(int slot)
{
    if (slot < 0)
        return;
    sigset_t old;
    block(&old);
    open_tmp[slot] = NULL;
    unblock(&old);
}

void ofile_cleanup_signal(void)
{
    for (int i = 0; i < MAX_OPEN; i++)
        if (open_tmp[i])
            unlink(open_tmp[i]);
}

ofile *ofile_open(const char *path, struct err *e)
{
    ofile *o = xcalloc(1, sizeof *o);
    o->path = xstrdup(path);
    o->slot = -1;
    if (strcmp(path, "-") == 0) {
        o->fp = stdout;
        return o;
    }
    /* An existing file that is not a regular one (/dev/full, /dev/stdout, a
     * FIFO, a terminal) is written in place: there is nothing to rename, and
     * renaming over it would replace the device node with a plain file. */
    struct stat st;
    int exists = stat(path, &st) == 0;
    if (exists && S_ISDIR(st.st_mode)) {
        err_set(e, path, 0, "output path names a directory");
        goto fail;
    }
    if (exists && !S_ISREG(st.st_mode)) {
        int dfd = open(path, O_WRONLY | O_CLOEXEC);
        if (dfd < 0) {
            err_io(e, path, 0, "cannot open output: %s", strerror(errno));
            goto fail;
        }
        if (!(o->fp = fdopen(dfd, "w"))) {
            close(dfd);
            err_io(e, path, 0, "cannot open output: %s", strerror(errno));
            goto fail;
        }
        o->direct = 1;
        return o;
    }
    const char *slash = strrchr(path, '/');
    size_t dirlen = slash ? (size_t)(slash - path) + 1 : 0;
    const char *base = slash ? slash + 1 : path;
    if (!*base) {
        err_set(e, path, 0, "output path names a directory");
        goto fail;
    }
    size_t n = dirlen + strlen(base) + 32;
    o->tmp = xmalloc(n);
    snprintf(o->tmp, n, "%.*s.%s.partial-XXXXXX", (int)dirlen, path, base);
    int fd = mkstemp(o->tmp);
    if (fd < 0) {
        err_io(e, path, 0, "cannot create output file: %s", strerror(errno));
        free(o->tmp);
        o->tmp = NULL;
        goto fail;
    }
    /* mkstemp makes the file 0600; give it the mode open(2) would have. */
    mode_t um = umask(0);
    umask(um);
    if (fchmod(fd, 0666 & ~um) != 0) { /* not fatal: the data is what matters */ }
    o->slot = register_tmp(o->tmp);
    o->fp = fdopen(fd, "w");
    if (!o->fp) {
        close(fd);
        err_io(e, path, 0, "cannot open output file: %s", strerror(errno));
        goto fail;
    }
    return o;
fail:
    ofile_abort(o);
    return NULL;
}

FILE *ofile_fp(ofile *o)
{
    return o->fp;
}

const char *ofile_path(const ofile *o)
{
    return o->path;
}

static void destroy(ofile *o)
{
    unregister_tmp(o->slot);
    free(o->tmp);
    free(o->path);
    free(o);
}

/* Flush and check the stream: 0, or -1 with 'e' naming 'name'.  glibc keeps
 * what a failed write could not hand over and retries it on fflush, so errno
 * then says why (ENOSPC, EPIPE, EFBIG); an error seen earlier with nothing
 * left to retry is reported as EIO. */
static int flush_checked(FILE *fp, const char *name, struct err *e)
{
    errno = 0;
    if (fflush(fp) != 0)
        return err_io(e, name, 0, "write failed: %s", strerror(errno ? errno : EIO));
    if (ferror(fp))
        return err_io(e, name, 0, "write failed: %s", strerror(EIO));
    return 0;
}

int ofile_commit(ofile *o, struct err *e)
{
    int rc = 0;
    if (!o->tmp && !o->direct) { /* stdout: main.c closes it at exit and checks again */
        rc = flush_checked(o->fp, "<stdout>", e);
        destroy(o);
        return rc;
    }
    if (o->direct) { /* a device or FIFO: no sync, nothing to rename or remove */
        rc = flush_checked(o->fp, o->path, e);
        if (fclose(o->fp) != 0 && rc == 0)
            rc = err_io(e, o->path, 0, "write failed: %s", strerror(errno));
        o->fp = NULL;
        destroy(o);
        return rc;
    }
    rc = flush_checked(o->fp, o->path, e);
    if (rc == 0 && fsync(fileno(o->fp)) != 0 && errno != EINVAL && errno != EROFS)
        rc = err_io(e, o->path, 0, "write failed: %s", strerror(errno));
    if (fclose(o->fp) != 0 && rc == 0)
        rc = err_io(e, o->path, 0, "write failed: %s", strerror(errno));
    o->fp = NULL;
    if (rc == 0 && rename(o->tmp, o->path) != 0)
        rc = err_io(e, o->path, 0, "cannot move output into place: %s", strerror(errno));
    if (rc != 0)
        unlink(o->tmp);
    destroy(o);
    return rc;
}

void ofile_abort(ofile *o)
{
    if (!o)
        return;
    if (o->fp && (o->tmp || o->direct))
        fclose(o->fp);
    if (o->tmp)
        unlink(o->tmp);
    destroy(o);
}

int ofile_check_distinct(const char *out, const char *const *inputs, size_t n, struct err *e)
{
    if (strcmp(out, "-") == 0)
        return 0;
    struct stat so;
    int have_out = stat(out, &so) == 0;
    for (size_t i = 0; i < n; i++) {
        if (!inputs[i] || strcmp(inputs[i], "-") == 0)
            continue;
        struct stat si;
        int same = strcmp(out, inputs[i]) == 0;
        if (!same && have_out && stat(inputs[i], &si) == 0)
            same = si.st_dev == so.st_dev && si.st_ino == so.st_ino;
        if (same) {
            err_set(e, out, 0, "output file is also an input ('%s'); refusing to overwrite it", inputs[i]);
            return err_hint(e, "choose another output name");
        }
    }
    return 0;
}
