/* main.c -- vecsift's entry point: dispatch to a command from the table.
 *
 * Adding a command:
 *   1. write src/cli/cmd_NAME.c defining cmd_NAME_info and cmd_NAME()
 *      (copy the shape of an existing one: option table, parse loop, work,
 *      one cleanup label);
 *   2. declare it with VECSIFT_COMMAND(NAME) in commands.h;
 *   3. add a row to cmds[] below (alphabetical) and the file to meson.build;
 *   4. add tests: tests/test_cli_NAME.c or cases in tests/cli/, and document
 *      it in README.md and vecsift.1.
 */
#include <errno.h>
#include <signal.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "commands.h"
#include "vecsift/err.h"
#include "vecsift/ofile.h"

#ifndef VECSIFT_VERSION
#define VECSIFT_VERSION "unknown"
#endif

struct cmd_entry {
    const struct cli_cmd *info;
    int (*run)(int argc, char **argv);
};

static const struct cmd_entry cmds[] = {
    { &cmd_audit_info, cmd_audit },
    { &cmd_compare_info, cmd_compare },
    { &cmd_curve_info, cmd_curve },
    { &cmd_demo_info, cmd_demo },
    { &cmd_evaluate_info, cmd_evaluate },
    { &cmd_features_info, cmd_features },
    { &cmd_map_info, cmd_map },
    { &cmd_predict_info, cmd_predict },
    { &cmd_serve_info, cmd_serve },
    { &cmd_suggest_info, cmd_suggest },
    { &cmd_train_info, cmd_train },
    { &cmd_vectors_info, cmd_vectors },
    { NULL, NULL }
};

static const struct cmd_entry *find(const char *name)
{
    for (const struct cmd_entry *c = cmds; c->info; c++)
        if (strcmp(c->info->name, name) == 0)
            return c;
    return NULL;
}

static void list_commands(FILE *fp)
{
    fprintf(fp, "usage: vecsift <command> [options] [arguments]\n\n"
                "Build text classifiers from a few hundred labelled examples, with word\n"
                "vectors as features; evaluate them honestly; route CSV exports in batch.\n\n"
                "commands:\n");
    for (const struct cmd_entry *c = cmds; c->info; c++)
        fprintf(fp, "  %-10s  %s\n", c->info->name, c->info->summary);
    fprintf(fp, "\n'vecsift help <command>' or 'vecsift <command> --help' tells more.\n"
                "'vecsift --version' prints the version.\n"
                "exit status: 0 success, 1 input/output or internal failure, 2 usage error or bad input\n");
}

static int unknown_command(const char *name)
{
    const char *best = NULL;
    size_t bestd = (size_t)-1;
    for (const struct cmd_entry *c = cmds; c->info; c++) {
        size_t d = cli_distance(name, c->info->name);
        if (d < bestd) {
            bestd = d;
            best = c->info->name;
        }
    }
    if (best && bestd <= 3)
        return cli_usage(NULL, "'%s' is not a command (did you mean '%s'?)", name, best);
    return cli_usage(NULL, "'%s' is not a command", name);
}

static void on_signal(int sig)
{
    ofile_cleanup_signal();
    signal(sig, SIG_DFL);
    raise(sig);
}

/* Every command's return passes through here: whatever it printed to stdout
 * (tables, help, near's answers, "-o -" outputs) is flushed and closed, and a
 * write that failed -- a full disk, a closed pipe, /dev/full -- turns a
 * success into exit 1 with one line naming the output (STYLE C15).  A command
 * that already failed has said why; the exit status stays its own. */
static int finish(int status)
{
    errno = 0;
    int bad = fflush(stdout) != 0 || ferror(stdout);
    int why = errno;
    if (fclose(stdout) != 0 && !bad) {
        bad = 1;
        why = errno;
    }
    if (bad && status == ERR_OK) {
        fprintf(stderr, "vecsift: <stdout>: write failed: %s\n", strerror(why ? why : EIO));
        return ERR_IO;
    }
    return status;
}

int main(int argc, char **argv)
{
    signal(SIGINT, on_signal);
    signal(SIGTERM, on_signal);
    signal(SIGHUP, on_signal);
    signal(SIGPIPE, SIG_IGN); /* a closed pipe shows up as a write error instead */
    /* Past a file-size limit (ulimit -f) the kernel would kill us with SIGXFSZ
     * and leave the temporary output behind; ignored, the write fails with
     * EFBIG, which ofile_commit reports and cleans up like a full disk. */
    signal(SIGXFSZ, SIG_IGN);

    if (argc < 2) {
        list_commands(stdout);
        return finish(ERR_OK);
    }
    const char *name = argv[1];
    if (strcmp(name, "--version") == 0) {
        printf("vecsift %s\n", VECSIFT_VERSION);
        return finish(ERR_OK);
    }
    if (strcmp(name, "--help") == 0 || strcmp(name, "-h") == 0 || strcmp(name, "help") == 0) {
        if (argc < 3) {
            list_commands(stdout);
            return finish(ERR_OK);
        }
        const struct cmd_entry *c = find(argv[2]);
        if (!c)
            return unknown_command(argv[2]);
        /* "help vectors pack" becomes "vectors pack --help" */
        char *sub[4] = { argv[2], NULL, NULL, NULL };
        int n = 1;
        if (argc > 3)
            sub[n++] = argv[3];
        sub[n++] = "--help";
        return finish(c->run(n, sub));
    }
    if (name[0] == '-')
        return cli_usage(NULL, "unknown option '%s' (options go after the command)", name);
    const struct cmd_entry *c = find(name);
    if (!c)
        return unknown_command(name);
    return finish(c->run(argc - 1, argv + 1));
}
