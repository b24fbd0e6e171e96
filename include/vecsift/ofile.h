/* ofile.h -- output files that appear whole or not at all.
 *
 * Every file vecsift writes goes to a temporary name in the destination's
 * directory and is renamed into place only when complete (DESIGN.md,
 * Conventions).  A failed, interrupted or killed run leaves no half-written
 * file and never truncates an existing one.  "-" writes to standard output.
 * A path naming an existing device, FIFO or socket (/dev/full, /dev/stdout,
 * a named pipe) is written in place: renaming over it would replace the
 * device node with a plain file.  Every write to any of them is checked: a
 * failed write, flush or close is an error, never a silent success.
 *
 * This module holds the one piece of process-wide state outside the CLI: the
 * list of temporary names still open, so that a SIGINT/SIGTERM handler can
 * remove them (ofile_cleanup_signal).  Nothing else here is global.
 */
#ifndef VECSIFT_OFILE_H
#define VECSIFT_OFILE_H

#include <stdio.h>
#include <stddef.h>

struct err;
typedef struct ofile ofile;

/* Start writing 'path' ("-" for stdout).  The temporary file is created next
 * to 'path' with the permissions a new file would get.  Returns a handle owned
 * by the caller (finish with ofile_commit or ofile_abort), or NULL with 'e'
 * set: ERR_IO when the directory is missing or not writable (or the device
 * cannot be opened), ERR_INPUT when 'path' is a directory. */
ofile *ofile_open(const char *path, struct err *e);

/* The stream to write to.  Borrowed; valid until commit/abort. */
FILE *ofile_fp(ofile *o);

/* The destination path given to ofile_open.  Borrowed. */
const char *ofile_path(const ofile *o);

/* Flush, check for write errors (a full disk, a closed pipe, a file-size
 * limit), sync, close and rename into place; a device is flushed and closed,
 * stdout only flushed (the CLI closes it at exit).  The message is "write
 * failed: REASON" naming the path, or "<stdout>".  Frees 'o' in every case; on
 * failure removes the temporary file and returns -1 with 'e' set (ERR_IO).
 * Returns 0 on success. */
int ofile_commit(ofile *o, struct err *e);

/* Close and remove the temporary file; the destination is untouched.
 * NULL-safe.  Frees 'o'. */
void ofile_abort(ofile *o);

/* Remove every temporary file still open.  Async-signal-safe: only unlink(2)
 * is called.  For the CLI's SIGINT/SIGTERM handler. */
void ofile_cleanup_signal(void);

/* Refuse to write 'out' when it names the same file as one of 'inputs' (same
 * device and inode, or the same path when it does not exist yet), so that an
 * input is never overwritten.  "-" never clashes.  Returns 0, or -1 with 'e'
 * set (ERR_INPUT) naming both. */
int ofile_check_distinct(const char *out, const char *const *inputs, size_t n, struct err *e);

#endif
