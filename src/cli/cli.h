/* cli.h -- what every command shares: option tables, help, usage errors,
 * printing errors, exit statuses.
 *
 * A command describes itself once in a struct cli_cmd (name, synopsis,
 * summary, option table).  The same table drives parsing, --help output and
 * the "did you mean" suggestion for a mistyped option, so the three can never
 * disagree.  Options are GNU style: --name VALUE, --name=VALUE, -k VALUE,
 * "--" ends options, "-" is an ordinary argument (stdin/stdout).
 *
 * Only src/cli prints or exits (STYLE C7).
 */
#ifndef VECSIFT_CLI_H
#define VECSIFT_CLI_H

#include <stddef.h>

struct err;

struct cli_opt {
    const char *name;   /* long name without "--" */
    char shrt;          /* short letter or 0 */
    const char *arg;    /* argument placeholder ("<n>"), NULL for a flag */
    const char *help;   /* one line; states the default */
};

struct cli_cmd {
    const char *name;       /* "evaluate", or "vectors pack" for nested verbs */
    const char *synopsis;   /* after "usage: vecsift NAME " */
    const char *summary;    /* one line for the command list */
    const struct cli_opt *opts; /* terminated by an entry with name NULL */
    const char *details;    /* paragraph printed after the options, or NULL */
};

enum { CLI_END = -1, CLI_FAIL = -2, CLI_HELP = -3 };

struct cli_parser {
    const struct cli_cmd *cmd;
    int argc;
    char **argv;
    int i;              /* next argv index */
    int no_more_opts;   /* after "--" */
    char **pos;         /* positional arguments, in order */
    int npos;
};

/* Start parsing argv[1..argc) for 'cmd' (argv[0] is the command's name).
 * Release with cli_parser_release. */
void cli_parser_init(struct cli_parser *p, const struct cli_cmd *cmd, int argc, char **argv);
void cli_parser_release(struct cli_parser *p);

/* Next option: returns its index in cmd->opts and sets *val to its argument
 * (NULL for flags); CLI_END when argv is used up (positionals are in p->pos);
 * CLI_HELP when --help/-h was given (help has been printed to stdout);
 * CLI_FAIL after printing a one-line usage error. */
int cli_next(struct cli_parser *p, const char **val);

/* Print the command's help to stdout. */
void cli_help(const struct cli_cmd *cmd);

/* Print "vecsift: <message>; see 'vecsift CMD --help'" and return 2. */
int cli_usage(const struct cli_cmd *cmd, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/* Checked number parsing for option 'opt' (its long name, for messages).
 * Print a usage error and return -1 when 'val' is not a number in [lo, hi]. */
int cli_long(const struct cli_cmd *cmd, const char *opt, const char *val, long lo, long hi, long *out);
int cli_double(const struct cli_cmd *cmd, const char *opt, const char *val, double lo, double hi, double *out);

/* --threads, the same in every command: a whole number from 1 to
 * CLI_MAX_THREADS, parsed and refused with one message.  The default is the
 * processors online, capped the same way. */
#define CLI_MAX_THREADS 256
int cli_threads(const struct cli_cmd *cmd, const char *val, int *out);
int cli_default_threads(void);

/* Print an error the one way: "vecsift: MSG" then "hint: HINT".  Returns the
 * exit status carried by the error (1 or 2). */
int cli_fail(const struct err *e);

/* Warnings and notes on stderr, silenced by --quiet (cli_quiet). */
extern int cli_quiet;
void cli_note(const char *fmt, ...) __attribute__((format(printf, 1, 2)));
void cli_warn(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

/* The warning for tokens over TEXT_MAX_TOKEN bytes that the tokeniser
 * skipped: "PATH:LINE: N tokens longer than 1024 bytes skipped ..." (LINE 0:
 * no line).  Nothing when n is 0. */
void cli_warn_too_long(const char *path, long line, size_t n);

/* Levenshtein distance, for suggestions. */
size_t cli_distance(const char *a, const char *b);

#endif
