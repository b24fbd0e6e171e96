/* test_ofile.c -- output appears whole or not at all. */
#include <criterion/criterion.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "vecsift/err.h"
#include "vecsift/ofile.h"

static char dir[] = "/tmp/vecsift-ofile-XXXXXX";

static void setup(void)
{
    cr_assert_not_null(mkdtemp(dir));
}

static int count_entries(void)
{
    char cmd[128];
    snprintf(cmd, sizeof cmd, "ls -A %s | wc -l", dir);
    FILE *p = popen(cmd, "r");
    int n = -1;
    if (fscanf(p, "%d", &n) != 1)
        n = -1;
    pclose(p);
    return n;
}

TestSuite(ofile, .init = setup);

Test(ofile, commit_renames_into_place)
{
    char path[256];
    snprintf(path, sizeof path, "%s/out.csv", dir);
    struct err e = ERR_INIT;
    ofile *o = ofile_open(path, &e);
    cr_assert_not_null(o);
    fputs("a,b\n", ofile_fp(o));
    cr_assert_eq(access(path, F_OK), -1, "destination must not exist before commit");
    cr_assert_eq(ofile_commit(o, &e), 0);
    cr_assert_eq(access(path, F_OK), 0);
    cr_assert_eq(count_entries(), 1);
}

Test(ofile, abort_leaves_old_file_untouched)
{
    char path[256];
    snprintf(path, sizeof path, "%s/keep.txt", dir);
    FILE *f = fopen(path, "w");
    fputs("precious\n", f);
    fclose(f);
    struct err e = ERR_INIT;
    ofile *o = ofile_open(path, &e);
    fputs("half", ofile_fp(o));
    ofile_abort(o);
    f = fopen(path, "r");
    char buf[32] = "";
    cr_assert_not_null(fgets(buf, sizeof buf, f));
    fclose(f);
    cr_assert_str_eq(buf, "precious\n");
    cr_assert_eq(count_entries(), 1);
}

Test(ofile, missing_directory_is_an_io_error_naming_the_file)
{
    struct err e = ERR_INIT;
    ofile *o = ofile_open("/nonexistent-dir/x.csv", &e);
    cr_assert_null(o);
    cr_assert_eq(e.code, ERR_IO);
    cr_assert(strstr(e.msg, "/nonexistent-dir/x.csv") != NULL);
}

Test(ofile, output_equal_to_input_is_refused)
{
    char path[256];
    snprintf(path, sizeof path, "%s/in.csv", dir);
    FILE *f = fopen(path, "w");
    fputs("x\n", f);
    fclose(f);
    char other[300];
    snprintf(other, sizeof other, "%s/./in.csv", dir);
    const char *ins[] = { other };
    struct err e = ERR_INIT;
    cr_assert_eq(ofile_check_distinct(path, ins, 1, &e), -1);
    cr_assert(strstr(e.msg, "refusing to overwrite") != NULL);
}

Test(ofile, full_disk_is_reported_and_leaves_nothing)
{
    /* /dev/full fails every write with ENOSPC; writing "through" it is not
     * possible with a rename, so emulate with a file size limit instead. */
    char path[256];
    snprintf(path, sizeof path, "%s/big.bin", dir);
    struct err e = ERR_INIT;
    ofile *o = ofile_open(path, &e);
    cr_assert_not_null(o);
    /* Make the stream fail as a full disk would. */
    FILE *fp = ofile_fp(o);
    close(fileno(fp));
    for (int i = 0; i < 100000; i++)
        fputs("0123456789", fp);
    cr_assert_eq(ofile_commit(o, &e), -1);
    cr_assert_eq(e.code, ERR_IO);
    cr_assert_eq(count_entries(), 0);
}

/* A path naming a device is written in place.  /dev/full fails every write
 * with ENOSPC (Linux null(4)/full(4) manual page); it is reached through a
 * link in the scratch directory, so that a regression (a rename over the
 * path) replaces the link, which this test sees, and never /dev/full. */
/* A link 'name' in the scratch directory to 'target'; its path in 'out'. */
static void link_to(const char *target, const char *name, char out[256])
{
    snprintf(out, 256, "%s/%s", dir, name);
    cr_assert_eq(symlink(target, out), 0);
}

Test(ofile, full_device_is_written_in_place_and_fails)
{
    char link[256];
    link_to("/dev/full", "full", link);
    struct err e = ERR_INIT;
    ofile *o = ofile_open(link, &e);
    cr_assert_not_null(o, "%s", e.msg);
    fputs("a,b\n", ofile_fp(o));
    cr_assert_eq(ofile_commit(o, &e), -1);
    cr_assert_eq(e.code, ERR_IO);
    cr_assert(strstr(e.msg, "full: write failed: No space left on device") != NULL, "%s", e.msg);
    struct stat st;
    cr_assert_eq(lstat(link, &st), 0);
    cr_assert(S_ISLNK(st.st_mode), "the link was replaced");
    cr_assert_eq(count_entries(), 1, "no temporary left");
    /* a failure already seen before commit (a write that filled the buffer
     * many times over) is reported the same way */
    err_clear(&e);
    o = ofile_open(link, &e);
    cr_assert_not_null(o);
    for (int i = 0; i < 100000; i++)
        fputs("0123456789", ofile_fp(o));
    cr_assert_eq(ofile_commit(o, &e), -1);
    cr_assert(strstr(e.msg, "No space left on device") != NULL, "%s", e.msg);
}

Test(ofile, null_device_succeeds_and_stays_a_device)
{
    char link[256];
    link_to("/dev/null", "null", link);
    struct err e = ERR_INIT;
    ofile *o = ofile_open(link, &e);
    cr_assert_not_null(o);
    fputs("x\n", ofile_fp(o));
    cr_assert_eq(ofile_commit(o, &e), 0, "%s", e.msg);
    struct stat st;
    cr_assert_eq(stat(link, &st), 0);
    cr_assert(S_ISCHR(st.st_mode));
    cr_assert_eq(count_entries(), 1);
    o = ofile_open(link, &e); /* abort on a device only closes it */
    cr_assert_not_null(o);
    ofile_abort(o);
    cr_assert_eq(count_entries(), 1);
}

Test(ofile, fifo_is_written_in_place)
{
    char fifo[256];
    snprintf(fifo, sizeof fifo, "%s/pipe", dir);
    cr_assert_eq(mkfifo(fifo, 0600), 0);
    FILE *rd = fopen(fifo, "r+"); /* r+ so that opening does not wait for a writer */
    cr_assert_not_null(rd);
    struct err e = ERR_INIT;
    ofile *o = ofile_open(fifo, &e);
    cr_assert_not_null(o, "%s", e.msg);
    fputs("row\n", ofile_fp(o));
    cr_assert_eq(ofile_commit(o, &e), 0, "%s", e.msg);
    char buf[16] = "";
    cr_assert_not_null(fgets(buf, sizeof buf, rd));
    cr_assert_str_eq(buf, "row\n");
    fclose(rd);
    struct stat st;
    cr_assert_eq(lstat(fifo, &st), 0);
    cr_assert(S_ISFIFO(st.st_mode));
}

Test(ofile, directory_is_refused_at_open)
{
    struct err e = ERR_INIT;
    cr_assert_null(ofile_open(dir, &e));
    cr_assert_eq(e.code, ERR_INPUT);
    cr_assert(strstr(e.msg, "names a directory") != NULL, "%s", e.msg);
    cr_assert_eq(count_entries(), 0);
}
