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

static const struct cli_opt opts[] = {
    { "vectors", 'v', "<file>", "packed vector set (.vecs); repeat to compare several" },
    { "pool", 'p', "<list>", "comma-separated: mean, tfidf, sif, bow, bow+mean, bow+tfidf,\n"
      "                              bow+sif (default: tfidf and bow+tfidf; bow is always added)" },
    { "classifier", 'c', "<list>", "comma-separated: logreg, svm-linear, svm-rbf (default: logreg)" },
    { "C", 'C', "<x>", "inverse regularisation strength, > 0, for every set-up\n"
      "                              (" PIPELINE_C_HELP ")" },
    { "gamma", 0, "<x>", "svm-rbf kernel width (default: 1 / (dimensions * variance))" },
    { "class-weight", 0, "<how>", "none | balanced: weight labels by n / (k * n_label) (default: none)" },
    { "sublinear-tf", 0, NULL, "use 1 + ln(tf) instead of raw term counts" },
    { "max-iter", 0, "<n>", "logreg: L-BFGS iteration cap (default: 1000)" },
    { "folds", 'k', "<n>", "folds, >= 2 (default: 5)" },
    { "repeats", 'R', "<n>", "repeats with fresh shuffles (default: 3)" },
    { "json", 'j', "<file>", "write the ranking, per-fold scores and tests as JSON" },
    { "report", 0, "<file>", "write a self-contained HTML page with an interval plot" },
    DATA_OPTIONS,
    RUN_OPTIONS,
    { NULL, 0, NULL, NULL }
};

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

struct cmp_args {
    struct data_args da;
    struct fit_args fa;
    struct cv_params cp;
    const char *vectors[MAX_VECTORS];
    size_t nvec;
    int pools[FEATURES_POOLS];       /* by enum features_pool: asked for */
    int clfs[3];                     /* by enum pipeline_classifier */
    const char *json, *report;
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

static int parse(int argc, char **argv, struct cmp_args *a, const char **data)
{
    const struct cli_cmd *cmd = &cmd_compare_info;
    struct cli_parser p;
    cli_parser_init(&p, cmd, argc, argv);
    int i;
    const char *val;
    while ((i = cli_next(&p, &val)) >= 0) {
        const char *name = opt_name(cmd, i);
        if (strcmp(name, "vectors") == 0) {
            if (a->nvec == MAX_VECTORS) {
                i = CLI_FAIL;
                cli_usage(cmd, "at most %d --vectors options", MAX_VECTORS);
                break;
            }
            a->vectors[a->nvec++] = val;
            continue;
        }
        if (strcmp(name, "pool") == 0) {
            if (parse_list(cmd, name, val, a->pools, FEATURES_POOLS, one_pool, FEATURES_POOL_NAMES) < 0)
                break;
            continue;
        }
        if (strcmp(name, "classifier") == 0) {
            if (parse_list(cmd, name, val, a->clfs, 3, one_clf, "logreg, svm-linear, svm-rbf") < 0)
                break;
            continue;
        }
        int t = cv_command_option(&a->da, &a->fa, &a->cp, cmd, name, val);
        if (t < 0)
            break;
        if (t > 0)
            continue;
        if (strcmp(name, "json") == 0) {
            a->json = val;
        } else if (strcmp(name, "report") == 0) {
            a->report = val;
        }
    }
    int rc = i == CLI_HELP ? -1 : i != CLI_END ? ERR_INPUT : 0;
    if (rc == 0 && p.npos != 1)
        rc = cli_usage(cmd, "compare takes one data file");
    if (rc == 0 && a->cp.folds * (long)a->cp.repeats < 2)
        rc = cli_usage(cmd, "the test needs at least 2 folds in all");
    if (rc == 0)
        *data = p.pos[0];
    cli_parser_release(&p);
    return rc;
}

/* Open every vector set before any work; a missing file is bad input. */
static int open_all(struct cmp_args *a, vecset **vs, struct err *e)
{
    int p = 0;
    while (p < FEATURES_POOLS && !(a->pools[p] && features_pool_needs_vectors((enum features_pool)p)))
        p++;
    if (p < FEATURES_POOLS && a->nvec == 0) {
        err_set(e, NULL, 0, "pooling '%s' needs word vectors", features_pool_name((enum features_pool)p));
        return err_hint(e, "pass one or more --vectors FILE.vecs, or compare --pool bow alone");
    }
    for (size_t v = 0; v < a->nvec; v++) {
        struct stat st;
        if (stat(a->vectors[v], &st) < 0 && errno == ENOENT) {
            err_set(e, a->vectors[v], 0, "vector set not found");
            return err_hint(e, "check the path given to --vectors (number %zu)", v + 1);
        }
        if (!(vs[v] = vecset_open(a->vectors[v], e)))
            return -1;
    }
    return 0;
}

int cmd_compare(int argc, char **argv)
{
    struct cmp_args a;
    memset(&a, 0, sizeof a);
    cli_keep_freed_memory();
    data_args_init(&a.da);
    fit_args_init(&a.fa);
    struct cv_params cp0 = CV_PARAMS_INIT;
    a.cp = cp0;
    const char *data = NULL;
    int rc = parse(argc, argv, &a, &data);
    if (rc != 0)
        return rc < 0 ? ERR_OK : rc;
    int any = 0;
    for (int p = 0; p < FEATURES_POOLS; p++)
        any |= a.pools[p];
    if (!any) {
        /* with vectors: the default pooling and the combined route on it */
        a.pools[a.nvec ? POOL_TFIDF : POOL_BOW] = 1;
        a.pools[POOL_BOW_TFIDF] = a.nvec > 0;
    }
    a.pools[POOL_BOW] = 1; /* the baseline is always there */
    if (!(a.clfs[0] | a.clfs[1] | a.clfs[2]))
        a.clfs[CLF_LOGREG] = 1;
    a.cp.seed = a.da.seed;
    a.fa.spec.seed = a.da.seed;

    struct err e = ERR_INIT;
    struct corpus c;
    memset(&c, 0, sizeof c);
    vecset *vs[MAX_VECTORS] = { 0 };
    struct compare_row *rows = NULL;
    size_t n = 0, *vidx = NULL, *order = NULL;
    cJSON *js = NULL;
    const char *ins[MAX_VECTORS + 1] = { data };
    for (size_t v = 0; v < a.nvec; v++)
        ins[v + 1] = a.vectors[v];
    const char *outs[] = { a.json, a.report };
    for (size_t q = 0; q < 2; q++)
        if (outs[q] && ofile_check_distinct(outs[q], ins, a.nvec + 1, &e) < 0)
            goto fail;
    if (open_all(&a, vs, &e) < 0)
        goto fail;
    struct dataset_options dopt;
    data_args_dataset(&a.da, 1, &dopt);
    if (corpus_load(&c, data, &dopt, &a.da.text, &e) < 0)
        goto fail;
    cli_warn_too_long(data, c.too_long_line, c.too_long);

    /* The set-ups: bow with each classifier, then vectors x pool x classifier. */
    rows = compare_grid_rows(a.vectors, a.nvec, a.pools, a.clfs, &vidx, &n);
    if (!cli_quiet)
        fprintf(stderr, "compare: %zu set-ups x %zu folds on %d threads\n", n,
                (size_t)a.cp.folds * a.cp.repeats, a.da.threads);
    a.cp.threads = a.da.threads;
    double wall;
    if (compare_grid_run(rows, n, vidx, &c, &a.fa.spec, vs, &a.cp, &wall, &e) < 0)
        goto fail;

    double nte = (double)c.ds.n / (double)a.cp.folds;
    struct compare_setup s = { data, &a.da, &a.fa.spec, &a.cp, c.ds.n, c.ds.nlabels, nte, (double)c.ds.n - nte,
                               0.05, wall, a.da.threads };
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
    for (size_t v = 0; v < a.nvec; v++)
        vecset_close(vs[v]);
    corpus_release(&c);
    return rc;
}
