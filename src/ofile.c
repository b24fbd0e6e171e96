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
    char *tmp;      /* temporary name, NULL for stdout */
    FILE *fp;
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

int ofile_commit(ofile *o, struct err *e)
{
    int rc = 0;
    if (!o->tmp) { /* stdout: the CLI checks fclose(stdout) at exit */
        if (fflush(o->fp) != 0 || ferror(o->fp))
            rc = err_io(e, "<stdout>", 0, "write failed: %s", strerror(errno ? errno : EIO));
        destroy(o);
        return rc;
    }
    errno = 0;
    if (fflush(o->fp) != 0 || ferror(o->fp)) {
        rc = err_io(e, o->path, 0, "write failed: %s", strerror(errno ? errno : EIO));
    } else if (fsync(fileno(o->fp)) != 0 && errno != EINVAL && errno != EROFS) {
        rc = err_io(e, o->path, 0, "write failed: %s", strerror(errno));
    }
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
    if (o->fp && o->tmp)
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
