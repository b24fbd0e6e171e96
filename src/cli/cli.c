/* cli.c -- option parsing, help and messages shared by every command. */
#include "cli.h"

#include <errno.h>
#include <math.h>
#include <assert.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "vecsift/err.h"
#include "vecsift/text.h"
#include "vecsift/xalloc.h"

int cli_quiet = 0;

/* ---- messages ---- */

int cli_usage(const struct cli_cmd *cmd, const char *fmt, ...)
{
    va_list ap;
    fputs("vecsift: ", stderr);
    va_start(ap, fmt);
    vfprintf(stderr, fmt, ap);
    va_end(ap);
    if (cmd)
        fprintf(stderr, "; see 'vecsift %s --help'\n", cmd->name);
    else
        fputs("; see 'vecsift help'\n", stderr);
    return ERR_INPUT;
}

int cli_fail(const struct err *e)
{
    fprintf(stderr, "vecsift: %s\n", e->msg[0] ? e->msg : "unknown error");
    if (e->hint[0])
        fprintf(stderr, "hint: %s\n", e->hint);
    return e->code == ERR_OK ? ERR_IO : e->code;
}

void cli_note(const char *fmt, ...)
{
    if (cli_quiet)
        return;
    va_list ap;
    va_start(ap, fmt);
    vfprintf(stderr, fmt, ap);
    va_end(ap);
    fputc('\n', stderr);
}

void cli_warn(const char *fmt, ...)
{
    if (cli_quiet)
        return;
    va_list ap;
    fputs("vecsift: warning: ", stderr);
    va_start(ap, fmt);
    vfprintf(stderr, fmt, ap);
    va_end(ap);
    fputc('\n', stderr);
}

size_t cli_distance(const char *a, const char *b)
{
    size_t la = strlen(a), lb = strlen(b);
    size_t *row = xcalloc(lb + 1, sizeof *row);
    for (size_t j = 0; j <= lb; j++)
        row[j] = j;
    for (size_t i = 1; i <= la; i++) {
        size_t diag = row[0];
        row[0] = i;
        for (size_t j = 1; j <= lb; j++) {
            size_t up = row[j];
            size_t best = diag + (a[i - 1] != b[j - 1]);
            if (up + 1 < best)
                best = up + 1;
            if (row[j - 1] + 1 < best)
                best = row[j - 1] + 1;
            row[j] = best;
            diag = up;
        }
    }
    size_t d = row[lb];
    free(row);
    return d;
}

/* ---- help ---- */

void cli_help(const struct cli_cmd *cmd)
{
    printf("usage: vecsift %s %s\n\n%s\n", cmd->name, cmd->synopsis, cmd->summary);
    if (cmd->opts && cmd->opts[0].name) {
        putchar('\n');
        for (const struct cli_opt *o = cmd->opts; o->name; o++) {
            char left[64];
            snprintf(left, sizeof left, "%c%c%s--%s%s%s", o->shrt ? '-' : ' ', o->shrt ? o->shrt : ' ',
                     o->shrt ? ", " : "  ", o->name, o->arg ? " " : "", o->arg ? o->arg : "");
            if (strlen(left) > 26)
                printf("  %s\n  %-26s  %s\n", left, "", o->help);
            else
                printf("  %-26s  %s\n", left, o->help);
        }
    }
    printf("  %-26s  %s\n", "-h, --help", "show this help and exit");
    if (cmd->details)
        printf("\n%s\n", cmd->details);
    printf("\nexit status: 0 success, 1 input/output or internal failure, 2 usage error or bad input\n");
}

/* ---- parsing ---- */

void cli_parser_init(struct cli_parser *p, const struct cli_cmd *cmd, int argc, char **argv)
{
    memset(p, 0, sizeof *p);
    p->cmd = cmd;
    p->argc = argc;
    p->argv = argv;
    p->i = 1;
    p->pos = xcalloc((size_t)argc + 1, sizeof *p->pos);
    size_t nopts = 0;
    while (cmd->opts && cmd->opts[nopts].name)
        nopts++;
    p->seen = xcalloc(nopts + 1, sizeof *p->seen);
}

void cli_parser_release(struct cli_parser *p)
{
    free(p->pos);
    free(p->seen);
    p->pos = NULL;
    p->seen = NULL;
}

static const char *closest_option(const struct cli_cmd *cmd, const char *name)
{
    const char *best = NULL;
    size_t bestd = (size_t)-1;
    for (const struct cli_opt *o = cmd->opts; o && o->name; o++) {
        size_t d = cli_distance(name, o->name);
        /* a prefix is a likely intent too ("--fold" for "--folds") */
        if (strncmp(o->name, name, strlen(name)) == 0 && strlen(name) >= 3)
            d = d < 1 ? d : 1;
        if (d < bestd) {
            bestd = d;
            best = o->name;
        }
    }
    size_t len = strlen(name);
    return best && bestd <= (len > 6 ? 3 : 2) ? best : NULL;
}

int cli_next(struct cli_parser *p, const char **val)
{
    *val = NULL;
    while (p->i < p->argc) {
        char *a = p->argv[p->i++];
        if (p->no_more_opts || a[0] != '-' || a[1] == '\0') {
            p->pos[p->npos++] = a;
            continue;
        }
        if (strcmp(a, "--") == 0) {
            p->no_more_opts = 1;
            continue;
        }
        const struct cli_opt *hit = NULL;
        const char *inl = NULL;
        if (a[1] == '-') {
            const char *name = a + 2;
            const char *eq = strchr(name, '=');
            size_t nlen = eq ? (size_t)(eq - name) : strlen(name);
            if (nlen == 4 && strncmp(name, "help", 4) == 0) {
                cli_help(p->cmd);
                return CLI_HELP;
            }
            for (const struct cli_opt *o = p->cmd->opts; o && o->name; o++)
                if (strlen(o->name) == nlen && strncmp(o->name, name, nlen) == 0) {
                    hit = o;
                    break;
                }
            if (!hit) {
                char buf[128];
                snprintf(buf, sizeof buf, "%.*s", (int)(nlen < 100 ? nlen : 100), name);
                const char *s = closest_option(p->cmd, buf);
                if (s)
                    cli_usage(p->cmd, "unknown option '--%s' for '%s' (did you mean '--%s'?)", buf, p->cmd->name, s);
                else
                    cli_usage(p->cmd, "unknown option '--%s' for '%s'", buf, p->cmd->name);
                return CLI_FAIL;
            }
            if (eq)
                inl = eq + 1;
        } else {
            if (a[1] == 'h' && a[2] == '\0') {
                cli_help(p->cmd);
                return CLI_HELP;
            }
            for (const struct cli_opt *o = p->cmd->opts; o && o->name; o++)
                if (o->shrt && o->shrt == a[1]) {
                    hit = o;
                    break;
                }
            if (!hit) {
                cli_usage(p->cmd, "unknown option '-%c' for '%s'", a[1], p->cmd->name);
                return CLI_FAIL;
            }
            if (a[2])
                inl = a + 2;
        }
        if (hit->arg) {
            if (inl)
                *val = inl;
            else if (p->i < p->argc)
                *val = p->argv[p->i++];
            else {
                cli_usage(p->cmd, "option '--%s' needs a value %s", hit->name, hit->arg);
                return CLI_FAIL;
            }
        } else if (inl && a[1] == '-') {
            cli_usage(p->cmd, "option '--%s' takes no value", hit->name);
            return CLI_FAIL;
        }
        return (int)(hit - p->cmd->opts);
    }
    return CLI_END;
}

int cli_long(const struct cli_cmd *cmd, const char *opt, const char *val, long lo, long hi, long *out)
{
    char *end;
    errno = 0;
    long v = strtol(val, &end, 10);
    if (end == val || *end || errno) {
        cli_usage(cmd, "option '--%s' needs a whole number, not '%s'", opt, val);
        return -1;
    }
    if (v < lo || v > hi) {
        cli_usage(cmd, "option '--%s' must be between %ld and %ld, not %ld", opt, lo, hi, v);
        return -1;
    }
    *out = v;
    return 0;
}

void cli_warn_too_long(const char *path, long line, size_t n)
{
    if (n == 0)
        return;
    char where[64] = "";
    if (line > 0)
        snprintf(where, sizeof where, ":%ld", line);
    cli_warn("%s%s: %zu token%s longer than %d bytes left out%s; no word is that long (a pasted attachment "
             "or dump?)", path, where, n, n == 1 ? "" : "s", TEXT_MAX_TOKEN, line > 0 ? ", the first on this line" : "");
}

int cli_default_threads(void)
{
    long n = sysconf(_SC_NPROCESSORS_ONLN);
    return n < 1 ? 1 : n > CLI_MAX_THREADS ? CLI_MAX_THREADS : (int)n;
}

int cli_double(const struct cli_cmd *cmd, const char *opt, const char *val, double lo, double hi, double *out)
{
    char *end;
    errno = 0;
    double v = strtod(val, &end);
    if (end == val || *end || errno || !isfinite(v)) {
        cli_usage(cmd, "option '--%s' needs a number, not '%s'", opt, val);
        return -1;
    }
    if (v < lo || v > hi) {
        cli_usage(cmd, "option '--%s' must be between %g and %g, not %g", opt, lo, hi, v);
        return -1;
    }
    *out = v;
    return 0;
}

/* Store one option's value where its row says; 0, or -1 after a usage error. */
static int take(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *args)
{
    void *dst = (char *)args + o->off;
    long v;
    switch (o->take) {
    case CLI_TAKE_SET:
        *(int *)dst = (int)o->lo;
        return 0;
    case CLI_TAKE_STR:
        *(const char **)dst = val;
        return 0;
    case CLI_TAKE_QUIET:
        cli_quiet = 1;
        return 0;
    case CLI_TAKE_DOUBLE:
        return cli_double(cmd, o->name, val, o->dlo, o->dhi, (double *)dst);
    case CLI_TAKE_FN:
        return o->fn(cmd, o, val, dst);
    case CLI_TAKE_INT:
    case CLI_TAKE_LONG:
    case CLI_TAKE_SIZE:
    case CLI_TAKE_U64:
        if (cli_long(cmd, o->name, val, o->lo, o->hi, &v) < 0)
            return -1;
        if (o->take == CLI_TAKE_INT)
            *(int *)dst = (int)v;
        else if (o->take == CLI_TAKE_LONG)
            *(long *)dst = v;
        else if (o->take == CLI_TAKE_SIZE)
            *(size_t *)dst = (size_t)v;
        else
            *(uint64_t *)dst = (uint64_t)v;
        return 0;
    case CLI_TAKE_NONE:
        break;
    }
    assert(!"an option row without a kind of value");
    return -1;
}

int cli_parse(struct cli_parser *p, const struct cli_cmd *cmd, int argc, char **argv, void *args)
{
    cli_parser_init(p, cmd, argc, argv);
    int i;
    const char *val;
    while ((i = cli_next(p, &val)) >= 0) {
        p->seen[i] = ++p->nseen;
        if (take(cmd, &cmd->opts[i], val, args) < 0)
            return CLI_FAIL;
    }
    return i;
}

int cli_seen(const struct cli_parser *p, const char *name)
{
    for (int i = 0; p->cmd->opts && p->cmd->opts[i].name; i++)
        if (strcmp(p->cmd->opts[i].name, name) == 0)
            return p->seen[i];
    return 0;
}

int cli_parse_exact(const struct cli_cmd *cmd, int argc, char **argv, void *args, int n, const char **pos,
                    const char *wrong)
{
    struct cli_parser p;
    int r = cli_parse(&p, cmd, argc, argv, args);
    if (r == CLI_END && p.npos != n)
        r = cli_usage(cmd, wrong, p.npos);
    else if (r == CLI_END)
        for (int i = 0; i < n; i++)
            pos[i] = p.pos[i];
    else
        r = cli_parse_status(r);
    cli_parser_release(&p);
    return r;
}
