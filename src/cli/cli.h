/* cli.h -- what every command shares: option tables, help, usage errors,
 * printing errors, exit statuses.
 *
 * A command describes itself once in a struct cli_cmd (name, synopsis,
 * summary, option table).  The same table drives parsing, --help output and
 * the "did you mean" suggestion for a mistyped option, so the three can never
 * disagree.  Each row also says where its value goes and how it is checked
 * (struct cli_opt's take, off and range; the CLI_OPT_* macros build rows),
 * and cli_parse is the one option loop every command runs.  Options are GNU
 * style: --name VALUE, --name=VALUE, -k VALUE, "--" ends options, "-" is an
 * ordinary argument (stdin/stdout).
 *
 * Only src/cli prints or exits (STYLE C7).
 */
#ifndef VECSIFT_CLI_H
#define VECSIFT_CLI_H

#include <stddef.h>
#include <stdint.h>

struct err;

struct cli_cmd;
struct cli_opt;

/* What an option does with its value, in the struct the command hands to
 * cli_parse ('args'): the option's field is at args + off.  Every number is
 * parsed and range-checked here, with the same messages for every command. */
enum cli_take {
    CLI_TAKE_NONE,      /* not an option: the table's end */
    CLI_TAKE_SET,       /* a flag: the int field becomes lo (1, or 0 for a --no-X flag) */
    CLI_TAKE_STR,       /* the const char * field points at the value */
    CLI_TAKE_INT,       /* a whole number in [lo, hi] into an int ... */
    CLI_TAKE_LONG,      /* ... a long */
    CLI_TAKE_SIZE,      /* ... a size_t */
    CLI_TAKE_U64,       /* ... a uint64_t */
    CLI_TAKE_DOUBLE,    /* a finite number in [dlo, dhi] into a double */
    CLI_TAKE_FN,        /* fn(cmd, opt, value, field) parses it */
    CLI_TAKE_QUIET,     /* a flag that sets cli_quiet (no field) */
};

/* Parses 'val' for option 'o' into 'dst' (the option's field).  Returns 0,
 * or -1 after printing a usage error with cli_usage. */
typedef int cli_take_fn(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst);

struct cli_opt {
    const char *name;   /* long name without "--" */
    char shrt;          /* short letter or 0 */
    const char *arg;    /* argument placeholder ("<n>"), NULL for a flag */
    const char *help;   /* one line; states the default */
    enum cli_take take;
    size_t off;         /* the field's offset in the command's args struct */
    long lo, hi;        /* whole numbers: the range; CLI_TAKE_SET: the value */
    double dlo, dhi;    /* CLI_TAKE_DOUBLE: the range */
    cli_take_fn *fn;    /* CLI_TAKE_FN */
};

/* The offset of field F of struct type T, which must have type TYPE (a
 * compile error otherwise: no _Generic association matches). */
#define CLI_AT(T, F, TYPE) (offsetof(T, F) + 0 * sizeof(char[_Generic(((T *)0)->F, TYPE: 1)]))

/* Table rows, one macro per kind of value (T: the args struct, F: the field). */
#define CLI_OPT_FLAG(NAME, S, HELP, T, F) \
    { NAME, S, NULL, HELP, CLI_TAKE_SET, CLI_AT(T, F, int), 1, 0, 0, 0, NULL }
#define CLI_OPT_UNSET(NAME, S, HELP, T, F) \
    { NAME, S, NULL, HELP, CLI_TAKE_SET, CLI_AT(T, F, int), 0, 0, 0, 0, NULL }
#define CLI_OPT_STR(NAME, S, ARG, HELP, T, F) \
    { NAME, S, ARG, HELP, CLI_TAKE_STR, CLI_AT(T, F, const char *), 0, 0, 0, 0, NULL }
#define CLI_OPT_INT(NAME, S, ARG, HELP, T, F, LO, HI) \
    { NAME, S, ARG, HELP, CLI_TAKE_INT, CLI_AT(T, F, int), LO, HI, 0, 0, NULL }
#define CLI_OPT_LONG(NAME, S, ARG, HELP, T, F, LO, HI) \
    { NAME, S, ARG, HELP, CLI_TAKE_LONG, CLI_AT(T, F, long), LO, HI, 0, 0, NULL }
#define CLI_OPT_SIZE(NAME, S, ARG, HELP, T, F, LO, HI) \
    { NAME, S, ARG, HELP, CLI_TAKE_SIZE, CLI_AT(T, F, size_t), LO, HI, 0, 0, NULL }
#define CLI_OPT_U64(NAME, S, ARG, HELP, T, F, LO, HI) \
    { NAME, S, ARG, HELP, CLI_TAKE_U64, CLI_AT(T, F, uint64_t), LO, HI, 0, 0, NULL }
#define CLI_OPT_DOUBLE(NAME, S, ARG, HELP, T, F, LO, HI) \
    { NAME, S, ARG, HELP, CLI_TAKE_DOUBLE, CLI_AT(T, F, double), 0, 0, LO, HI, NULL }
#define CLI_OPT_FN(NAME, S, ARG, HELP, T, F, TYPE, FN) \
    { NAME, S, ARG, HELP, CLI_TAKE_FN, CLI_AT(T, F, TYPE), 0, 0, 0, 0, FN }
#define CLI_OPT_QUIET(HELP) { "quiet", 'q', NULL, HELP, CLI_TAKE_QUIET, 0, 0, 0, 0, 0, NULL }
#define CLI_OPT_END { NULL, 0, NULL, NULL, CLI_TAKE_NONE, 0, 0, 0, 0, 0, NULL }

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
    int *seen;          /* per option row: when it was last given (1, 2, ...), or 0 */
    int nseen;
};

/* Start parsing argv[1..argc) for 'cmd' (argv[0] is the command's name).
 * Release with cli_parser_release. */
void cli_parser_init(struct cli_parser *p, const struct cli_cmd *cmd, int argc, char **argv);
void cli_parser_release(struct cli_parser *p);

/* Next option (the step cli_parse repeats): returns its index in cmd->opts and sets *val to its argument
 * (NULL for flags); CLI_END when argv is used up (positionals are in p->pos);
 * CLI_HELP when --help/-h was given (help has been printed to stdout);
 * CLI_FAIL after printing a one-line usage error. */
int cli_next(struct cli_parser *p, const char **val);

/* The one option loop: parse argv[1..argc) for 'cmd', storing every
 * option's value in 'args' as its table row says (checked there, in one
 * place).  Returns CLI_END when the command should run, with the
 * positional arguments in p->pos; CLI_HELP after printing the help;
 * CLI_FAIL after printing a usage error.  Release p in every case. */
int cli_parse(struct cli_parser *p, const struct cli_cmd *cmd, int argc, char **argv, void *args);

/* cli_parse for a command that takes exactly 'n' positional arguments,
 * stored in pos[0..n).  Another count is a usage error whose message is
 * 'wrong', a printf format given the count found (it may leave it out).
 * Returns CLI_END when the command should run, else the exit status to
 * return: 0 after --help, 2 after a usage error. */
int cli_parse_exact(const struct cli_cmd *cmd, int argc, char **argv, void *args, int n, const char **pos,
                    const char *wrong);

/* After cli_parse: 0 when option 'name' was not given, else a number that
 * grows with its place on the command line (of its last occurrence), so
 * two options' order can be compared. */
int cli_seen(const struct cli_parser *p, const char *name);

/* The exit status for what cli_parse returned when it is not CLI_END:
 * 0 after --help, 2 after a usage error. */
static inline int cli_parse_status(int r)
{
    return r == CLI_HELP ? 0 : 2;
}

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
