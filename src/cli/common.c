/* common.c -- shared options of the data-reading commands (see common.h). */
#include "common.h"

#include <malloc.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "vecsift/cv.h"
#include "vecsift/err.h"
#include "vecsift/vecset.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"

int cores(void)
{
    return cli_default_threads();
}

void cut_format(double p, char *buf, size_t n)
{
    for (int d = 3; d <= 17; d++) {
        snprintf(buf, n, "%.*f", d, p);
        if (strtod(buf, NULL) == p)
            return;
    }
}

void data_args_init(struct data_args *a)
{
    memset(a, 0, sizeof *a);
    struct csv_options c = CSV_OPTIONS_INIT;
    struct text_options t = TEXT_OPTIONS_INIT;
    a->csv = c;
    a->text = t;
    a->threads = cores();
    a->seed = 1;
}

int data_args_option(struct data_args *a, const struct cli_cmd *cmd, const char *name, const char *val)
{
    long v;
    if (strcmp(name, "text-col") == 0) {
        if (a->ntext == MAX_TEXT_COLS) {
            cli_usage(cmd, "at most %d --text-col options", MAX_TEXT_COLS);
            return -1;
        }
        a->text_cols[a->ntext++] = val;
    } else if (strcmp(name, "label-col") == 0) {
        a->label_col = val;
    } else if (strcmp(name, "group-col") == 0) {
        a->group_col = val;
    } else if (strcmp(name, "encoding") == 0) {
        if (csv_encoding_parse(val, &a->csv.encoding) < 0) {
            cli_usage(cmd, "option '--encoding' takes utf-8, windows-1252 or latin-1, not '%s'", val);
            return -1;
        }
    } else if (strcmp(name, "replace-invalid") == 0) {
        a->csv.replace_invalid = 1;
    } else if (strcmp(name, "keep-accents") == 0) {
        a->text.keep_accents = 1;
    } else if (strcmp(name, "mask-numbers") == 0) {
        a->text.mask_number = 1;
    } else if (strcmp(name, "keep-emails") == 0) {
        a->text.mask_email = a->text.mask_url = 0;
    } else if (strcmp(name, "seed") == 0) {
        if (cli_long(cmd, name, val, 0, 0x7fffffffffffffffL, &v) < 0)
            return -1;
        a->seed = (uint64_t)v;
    } else if (strcmp(name, "threads") == 0) {
        if (cli_threads(cmd, val, &a->threads) < 0)
            return -1;
    } else if (strcmp(name, "quiet") == 0) {
        cli_quiet = 1;
    } else {
        return 0;
    }
    return 1;
}

void data_args_dataset(const struct data_args *a, int labelled, struct dataset_options *o)
{
    static const char *const default_text[] = { "text" };
    memset(o, 0, sizeof *o);
    o->text_cols = a->ntext ? a->text_cols : default_text;
    o->ntext = a->ntext ? a->ntext : 1;
    o->label_col = labelled ? (a->label_col ? a->label_col : "label") : NULL;
    o->group_col = a->group_col;
    o->csv = a->csv;
}

void fit_args_init(struct fit_args *f)
{
    struct pipeline_spec s = PIPELINE_SPEC_INIT;
    f->vectors = NULL;
    f->spec = s;
}

int fit_args_option(struct fit_args *f, const struct cli_cmd *cmd, const char *name, const char *val)
{
    long v;
    if (strcmp(name, "vectors") == 0) {
        f->vectors = val;
    } else if (strcmp(name, "pool") == 0) {
        if (features_pool_parse(val, &f->spec.feat.pool) < 0) {
            cli_usage(cmd, "option '--pool' takes one of " FEATURES_POOL_NAMES ", not '%s'", val);
            return -1;
        }
    } else if (strcmp(name, "classifier") == 0) {
        if (pipeline_classifier_parse(val, &f->spec.clf) < 0) {
            cli_usage(cmd, "option '--classifier' takes logreg, svm-linear or svm-rbf, not '%s'", val);
            return -1;
        }
    } else if (strcmp(name, "C") == 0) {
        if (cli_double(cmd, name, val, 1e-9, 1e9, &f->spec.C) < 0)
            return -1;
    } else if (strcmp(name, "gamma") == 0) {
        if (cli_double(cmd, name, val, 1e-12, 1e9, &f->spec.gamma) < 0)
            return -1;
    } else if (strcmp(name, "class-weight") == 0) {
        if (strcmp(val, "balanced") == 0)
            f->spec.balanced = 1;
        else if (strcmp(val, "none") == 0)
            f->spec.balanced = 0;
        else {
            cli_usage(cmd, "option '--class-weight' takes none or balanced, not '%s'", val);
            return -1;
        }
    } else if (strcmp(name, "sublinear-tf") == 0) {
        f->spec.feat.sublinear_tf = 1;
    } else if (strcmp(name, "max-iter") == 0) {
        if (cli_long(cmd, name, val, 1, 1000000, &v) < 0)
            return -1;
        f->spec.max_iter = (int)v;
    } else {
        return 0;
    }
    return 1;
}

void err_name_file(struct err *e, const char *path)
{
    size_t n = strlen(path);
    if (strncmp(e->msg, path, n) == 0 && e->msg[n] == ':')
        return;
    struct err inner = *e;
    err_clear(e);
    err_set(e, path, 0, "%s", inner.msg);
    e->code = inner.code;
    memcpy(e->hint, inner.hint, sizeof e->hint);
}

int cv_args_option(struct cv_params *cp, const struct cli_cmd *cmd, const char *name, const char *val)
{
    long v;
    if (strcmp(name, "folds") == 0) {
        if (cli_long(cmd, name, val, 2, 1000, &v) < 0)
            return -1;
        cp->folds = (int)v;
    } else if (strcmp(name, "repeats") == 0) {
        if (cli_long(cmd, name, val, 1, 1000, &v) < 0)
            return -1;
        cp->repeats = (size_t)v;
    } else if (strcmp(name, "search") == 0) {
        cp->search = 1;
    } else {
        return 0;
    }
    return 1;
}

/* Every fold allocates and frees the same large blocks (its feature
 * matrix, the classifier's scratch; about 2 MB for 400 rows of 300-d
 * vectors).  glibc gives blocks this size back to the system on free, by
 * munmap or by trimming the heap, so every fold took them afresh, page by
 * zeroed page: on the demo inbox the page faults cost a third of evaluate's
 * CPU time.  Keeping freed memory in the process for reuse
 * removes that; the peak footprint is unchanged.  Only allocation
 * placement changes, never a result. */
void cli_keep_freed_memory(void)
{
#ifdef __GLIBC__
    mallopt(M_MMAP_THRESHOLD, 64 << 20);
    mallopt(M_TRIM_THRESHOLD, 256 << 20);
#endif
}

int *cv_args_groups(struct cv_params *cp, const struct corpus *c)
{
    if (!c->ds.group)
        return NULL;
    vocab *v = vocab_new();
    int *g = xcalloc(c->ds.n ? c->ds.n : 1, sizeof *g);
    for (size_t i = 0; i < c->ds.n; i++)
        g[i] = vocab_add(v, c->ds.group[i]);
    cp->n_groups = (int)vocab_size(v);
    cp->group = g;
    vocab_free(v);
    return g;
}

int cv_command_option(struct data_args *da, struct fit_args *fa, struct cv_params *cp, const struct cli_cmd *cmd,
                      const char *name, const char *val)
{
    int t = data_args_option(da, cmd, name, val);
    if (t == 0)
        t = fit_args_option(fa, cmd, name, val);
    if (t == 0)
        t = cv_args_option(cp, cmd, name, val);
    return t;
}

int fit_args_open_vectors(const struct fit_args *f, struct vecset **vs, struct err *e)
{
    *vs = NULL;
    if (!features_pool_needs_vectors(f->spec.feat.pool))
        return 0;
    if (!f->vectors) {
        err_set(e, NULL, 0, "pooling '%s' needs word vectors", features_pool_name(f->spec.feat.pool));
        return err_hint(e, "pass --vectors FILE.vecs (see 'vecsift vectors pack' and 'vecsift vectors learn'), "
                           "or use --pool bow");
    }
    *vs = vecset_open(f->vectors, e);
    return *vs ? 0 : -1;
}
