/* cmd_compare.c -- `vecsift compare`: every combination of vector sets,
 * poolings and classifiers (plus the bow baseline) cross-validated on
 * exactly the same folds (compare_grid.c), ranked by macro-F1, each tested
 * against the best (compare_out.c).
 */
#include <cjson/cJSON.h>
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "commands.h"
#include "common.h"
#include "compare_grid.h"
#include "compare_out.h"
#include "evaluate_out.h"
#include "vecsift/err.h"
#include "vecsift/ofile.h"
#include "vecsift/vecset.h"
#include "vecsift/xalloc.h"

#define MAX_VECTORS 16

/* The vector sets of --vectors, in order. */
struct vector_list {
    const char *path[MAX_VECTORS];
    size_t n;
};

struct cmp_args {
    struct common_cv cv;
    struct vector_list vectors;
    int pools[FEATURES_POOLS];       /* by enum features_pool: asked for */
    int clfs[3];                     /* by enum pipeline_classifier */
    const char *json, *report;
};

static cli_take_fn take_vectors, take_pools, take_classifiers;

#define A struct cmp_args
static const struct cli_opt opts[] = {
    CLI_OPT_FN("vectors", 'v', "<file>", "packed vector set (.vecs); repeat to compare several", A, vectors,
               struct vector_list, take_vectors),
    CLI_OPT_FN("pool", 'p', "<list>", "comma-separated: mean, tfidf, sif, bow, bow+mean, bow+tfidf,\n"
               "                              bow+sif (default: tfidf and bow+tfidf; bow is always added)",
               A, pools, int *, take_pools),
    CLI_OPT_FN("classifier", 'c', "<list>", "comma-separated: logreg, svm-linear, svm-rbf (default: logreg)", A, clfs,
               int *, take_classifiers),
    COMMON_OPT_C("inverse regularisation strength, > 0, for every set-up\n"
                 "                              (" PIPELINE_C_HELP ")", A, cv.fa),
    COMMON_OPT_GAMMA(A, cv.fa),
    COMMON_OPT_CLASS_WEIGHT(A, cv.fa),
    COMMON_OPT_SUBLINEAR_TF(A, cv.fa),
    COMMON_OPT_MAX_ITER(A, cv.fa),
    COMMON_OPT_FOLDS(A, cv.cp),
    COMMON_OPT_REPEATS("repeats with fresh shuffles (default: 3)", A, cv.cp),
    CLI_OPT_STR("json", 'j', "<file>", "write the ranking, per-fold scores and tests as JSON", A, json),
    CLI_OPT_STR("report", 0, "<file>", "write a self-contained HTML page with an interval plot", A, report),
    COMMON_CV_LAST_OPTIONS(A, cv)
};
#undef A

const struct cli_cmd cmd_compare_info = {
    "compare", "[options] DATA.csv",
    "rank vector sets, poolings and classifiers on the same folds, with a significance test",
    opts,
    "Every combination of --vectors x --pool x --classifier, and the bow\n"
    "baseline (no vectors) with each classifier, is cross-validated on exactly\n"
    "the same folds.  Rows are ranked by mean macro-F1 over folds; each is\n"
    "tested against the best with the corrected resampled t-test of Nadeau\n"
    "and Bengio (2003) on its per-fold macro-F1, one-sided at 5%."
};

/* Parse a comma-separated list of names into flags[]; -1 after a usage error. */
static int parse_list(const struct cli_cmd *cmd, const char *opt, const char *val, int *flags, size_t nflags,
                      int (*one)(const char *, int *), const char *choices)
{
    char *copy = xstrdup(val), *save = NULL;
    int rc = 0;
    memset(flags, 0, nflags * sizeof *flags);
    for (char *tok = strtok_r(copy, ",", &save); tok; tok = strtok_r(NULL, ",", &save)) {
        int v;
        if (one(tok, &v) < 0) {
            rc = cli_usage(cmd, "option '--%s' takes a list of %s; '%s' is not one", opt, choices, tok);
            break;
        }
        flags[v] = 1;
    }
    if (rc == 0) {
        int any = 0;
        for (size_t i = 0; i < nflags; i++)
            any |= flags[i];
        if (!any)
            rc = cli_usage(cmd, "option '--%s' needs at least one of %s", opt, choices);
    }
    free(copy);
    return rc ? -1 : 0;
}

static int one_pool(const char *s, int *v)
{
    enum features_pool p;
    if (features_pool_parse(s, &p) < 0)
        return -1;
    *v = (int)p;
    return 0;
}

static int one_clf(const char *s, int *v)
{
    enum pipeline_classifier c;
    if (pipeline_classifier_parse(s, &c) < 0)
        return -1;
    *v = (int)c;
    return 0;
}

static int take_vectors(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst)
{
    (void)o;
    struct vector_list *l = dst;
    if (l->n == MAX_VECTORS) {
        cli_usage(cmd, "at most %d --vectors options", MAX_VECTORS);
        return -1;
    }
    l->path[l->n++] = val;
    return 0;
}

static int take_pools(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst)
{
    return parse_list(cmd, o->name, val, dst, FEATURES_POOLS, one_pool, FEATURES_POOL_NAMES);
}

static int take_classifiers(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst)
{
    return parse_list(cmd, o->name, val, dst, 3, one_clf, "logreg, svm-linear, svm-rbf");
}

/* Open every vector set before any work; a missing file is bad input. */
static int open_all(struct cmp_args *a, vecset **vs, struct err *e)
{
    int p = 0;
    while (p < FEATURES_POOLS && !(a->pools[p] && features_pool_needs_vectors((enum features_pool)p)))
        p++;
    if (p < FEATURES_POOLS && a->vectors.n == 0) {
        err_set(e, NULL, 0, "pooling '%s' needs word vectors", features_pool_name((enum features_pool)p));
        return err_hint(e, "pass one or more --vectors FILE.vecs, or compare --pool bow alone");
    }
    for (size_t v = 0; v < a->vectors.n; v++) {
        struct stat st;
        if (stat(a->vectors.path[v], &st) < 0 && errno == ENOENT) {
            err_set(e, a->vectors.path[v], 0, "vector set not found");
            return err_hint(e, "check the path given to --vectors (number %zu)", v + 1);
        }
        if (!(vs[v] = vecset_open(a->vectors.path[v], e)))
            return -1;
    }
    return 0;
}

int cmd_compare(int argc, char **argv)
{
    struct cmp_args a;
    memset(&a, 0, sizeof a);
    common_keep_freed_memory();
    common_cv_init(&a.cv, 3);
    const char *data = NULL;
    int rc = cli_parse_exact(&cmd_compare_info, argc, argv, &a, 1, &data, "compare takes one data file");
    if (rc != CLI_END)
        return rc;
    rc = ERR_OK;
    if (a.cv.cp.folds * (long)a.cv.cp.repeats < 2)
        return cli_usage(&cmd_compare_info, "the test needs at least 2 folds in all");
    struct common_data *da = &a.cv.da;
    struct common_fit *fa = &a.cv.fa;
    struct cv_params *cp = &a.cv.cp;
    int any = 0;
    for (int p = 0; p < FEATURES_POOLS; p++)
        any |= a.pools[p];
    if (!any) {
        /* with vectors: the default pooling and the combined route on it */
        a.pools[a.vectors.n ? POOL_TFIDF : POOL_BOW] = 1;
        a.pools[POOL_BOW_TFIDF] = a.vectors.n > 0;
    }
    a.pools[POOL_BOW] = 1; /* the baseline is always there */
    if (!(a.clfs[0] | a.clfs[1] | a.clfs[2]))
        a.clfs[CLF_LOGREG] = 1;
    cp->seed = da->seed;
    fa->spec.seed = da->seed;

    struct err e = ERR_INIT;
    struct corpus c;
    memset(&c, 0, sizeof c);
    vecset *vs[MAX_VECTORS] = { 0 };
    struct compare_row *rows = NULL;
    size_t n = 0, *vidx = NULL, *order = NULL;
    cJSON *js = NULL;
    const char *ins[MAX_VECTORS + 1] = { data };
    for (size_t v = 0; v < a.vectors.n; v++)
        ins[v + 1] = a.vectors.path[v];
    const char *outs[] = { a.json, a.report };
    for (size_t q = 0; q < 2; q++)
        if (outs[q] && ofile_check_distinct(outs[q], ins, a.vectors.n + 1, &e) < 0)
            goto fail;
    if (open_all(&a, vs, &e) < 0)
        goto fail;
    if (common_load_labelled(&c, data, da, &e) < 0)
        goto fail;
    cli_warn_too_long(data, c.too_long_line, c.too_long);

    /* The set-ups: bow with each classifier, then vectors x pool x classifier. */
    rows = compare_grid_rows(a.vectors.path, a.vectors.n, a.pools, a.clfs, &vidx, &n);
    if (!cli_quiet)
        fprintf(stderr, "compare: %zu set-ups x %zu folds on %d threads\n", n,
                (size_t)cp->folds * cp->repeats, da->threads);
    cp->threads = da->threads;
    double wall;
    if (compare_grid_run(rows, n, vidx, &c, &fa->spec, vs, cp, &wall, &e) < 0)
        goto fail;

    double nte = (double)c.ds.n / (double)cp->folds;
    struct compare_setup s = { data, da, &fa->spec, cp, c.ds.n, c.ds.nlabels, nte, (double)c.ds.n - nte,
                               0.05, wall, da->threads };
    order = xcalloc(n, sizeof *order);
    if (compare_rank(rows, n, &s, order, &e) < 0)
        goto fail;
    compare_terminal(stdout, rows, order, n, &s);
    if (a.json) {
        js = compare_json(rows, order, n, &s);
        if (evaluate_write_json(a.json, js, &e) < 0)
            goto fail;
    }
    if (a.report && compare_html(a.report, rows, order, n, &s, &e) < 0)
        goto fail;
    goto done;
fail:
    rc = cli_fail(&e);
done:
    cJSON_Delete(js);
    compare_grid_free(rows, n);
    free(vidx);
    free(order);
    for (size_t v = 0; v < a.vectors.n; v++)
        vecset_close(vs[v]);
    corpus_release(&c);
    return rc;
}
