/* common.c -- the options and set-up steps the data-reading commands share
 * (see common.h). */
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

int common_cores(void)
{
    return cli_default_threads();
}

void common_cut_format(double p, char *buf, size_t n)
{
    for (int d = 3; d <= 17; d++) {
        snprintf(buf, n, "%.*f", d, p);
        if (strtod(buf, NULL) == p)
            return;
    }
}

/* ---- the option parsers ---- */

int common_take_text_col(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst)
{
    (void)o;
    struct common_data *a = dst;
    if (a->ntext == COMMON_MAX_TEXT_COLS) {
        cli_usage(cmd, "at most %d --text-col options", COMMON_MAX_TEXT_COLS);
        return -1;
    }
    a->text_cols[a->ntext++] = val;
    return 0;
}

int common_take_encoding(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst)
{
    (void)o;
    if (csv_encoding_parse(val, dst) < 0) {
        cli_usage(cmd, "option '--encoding' takes utf-8, windows-1252 or latin-1, not '%s'", val);
        return -1;
    }
    return 0;
}

int common_take_keep_emails(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst)
{
    (void)cmd, (void)o, (void)val;
    struct text_options *t = dst;
    t->mask_email = t->mask_url = 0;
    return 0;
}

int common_take_pool(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst)
{
    (void)o;
    if (features_pool_parse(val, dst) < 0) {
        cli_usage(cmd, "option '--pool' takes one of " FEATURES_POOL_NAMES ", not '%s'", val);
        return -1;
    }
    return 0;
}

int common_take_classifier(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst)
{
    (void)o;
    if (pipeline_classifier_parse(val, dst) < 0) {
        cli_usage(cmd, "option '--classifier' takes logreg, svm-linear or svm-rbf, not '%s'", val);
        return -1;
    }
    return 0;
}

int common_take_class_weight(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst)
{
    (void)o;
    int *balanced = dst;
    if (strcmp(val, "balanced") == 0)
        *balanced = 1;
    else if (strcmp(val, "none") == 0)
        *balanced = 0;
    else {
        cli_usage(cmd, "option '--class-weight' takes none or balanced, not '%s'", val);
        return -1;
    }
    return 0;
}

/* ---- set-up ---- */

void common_data_init(struct common_data *a)
{
    memset(a, 0, sizeof *a);
    struct csv_options c = CSV_OPTIONS_INIT;
    struct text_options t = TEXT_OPTIONS_INIT;
    a->csv = c;
    a->text = t;
    a->threads = common_cores();
    a->seed = 1;
}

void common_data_options(const struct common_data *a, int labelled, struct dataset_options *o)
{
    static const char *const default_text[] = { "text" };
    memset(o, 0, sizeof *o);
    o->text_cols = a->ntext ? a->text_cols : default_text;
    o->ntext = a->ntext ? a->ntext : 1;
    o->label_col = labelled ? (a->label_col ? a->label_col : "label") : NULL;
    o->group_col = a->group_col;
    o->csv = a->csv;
}

void common_fit_init(struct common_fit *f)
{
    struct pipeline_spec s = PIPELINE_SPEC_INIT;
    f->vectors = NULL;
    f->spec = s;
}

void common_cv_init(struct common_cv *a, size_t repeats)
{
    struct cv_params cp = CV_PARAMS_INIT;
    common_data_init(&a->da);
    common_fit_init(&a->fa);
    a->cp = cp;
    a->cp.repeats = repeats;
}

void common_cv_ready(struct common_cv *a)
{
    a->cp.seed = a->da.seed;
    a->cp.threads = a->da.threads;
    a->fa.spec.seed = a->da.seed;
}

int common_load_labelled(struct corpus *c, const char *path, const struct common_data *a, struct err *e)
{
    struct dataset_options dopt;
    common_data_options(a, 1, &dopt);
    return corpus_load(c, path, &dopt, &a->text, e);
}

/* 1 when the CSV file has column 'name', 0 when not, -1 on error. */
static int has_column(const char *path, const struct csv_options *co, const char *name, struct err *e)
{
    csv_reader *r = csv_open(path, co, e);
    if (!r)
        return -1;
    int has = csv_col(r, name) >= 0;
    csv_close(r);
    return has;
}

int common_load_maybe_labelled(struct corpus *c, const char *path, struct common_data *a, const char *asked,
                               int *labelled, struct err *e)
{
    struct dataset_options dopt;
    common_data_options(a, 1, &dopt);
    int has = has_column(path, &a->csv, dopt.label_col, e);
    if (has < 0)
        return -1;
    if (!has && asked)
        return err_set(e, path, 1, "no column '%s'", asked);
    *labelled = has;
    common_data_options(a, has, &dopt);
    return corpus_load(c, path, &dopt, &a->text, e);
}

size_t *common_all_rows(const struct corpus *c)
{
    size_t *rows = xcalloc(c->ds.n ? c->ds.n : 1, sizeof *rows);
    for (size_t r = 0; r < c->ds.n; r++)
        rows[r] = r;
    return rows;
}

void common_name_file(struct err *e, const char *path)
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

/* Every fold allocates and frees the same large blocks (its feature
 * matrix, the classifier's scratch; about 2 MB for 400 rows of 300-d
 * vectors).  glibc gives blocks this size back to the system on free, by
 * munmap or by trimming the heap, so every fold took them afresh, page by
 * zeroed page: on the demo inbox the page faults cost a third of evaluate's
 * CPU time.  Keeping freed memory in the process for reuse
 * removes that; the peak footprint is unchanged.  Only allocation
 * placement changes, never a result. */
void common_keep_freed_memory(void)
{
#ifdef __GLIBC__
    mallopt(M_MMAP_THRESHOLD, 64 << 20);
    mallopt(M_TRIM_THRESHOLD, 256 << 20);
#endif
}

int *common_cv_groups(struct cv_params *cp, const struct corpus *c)
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

int common_open_vectors(const struct common_fit *f, struct vecset **vs, struct err *e)
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
