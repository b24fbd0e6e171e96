/* cmd_compare.c -- `vecsift compare`: every combination of vector sets,
 * poolings and classifiers (plus the bow baseline) cross-validated on
 * exactly the same folds, ranked by macro-F1, each tested against the best.
 *
 * Every set-up is cross-validated with the same cv_params (folds, repeats,
 * seed), which makes the same fold assignment, so per-fold scores pair up.
 * Set-ups that differ only in the classifier form a group and go through
 * one cv_run_shared, which featurizes each fold once for all of them.  The
 * groups run side by side, one per thread; cv's results do not depend on
 * the thread count (svmfit's rand() is per thread), so neither does the
 * comparison.
 */
#include <cjson/cJSON.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include "commands.h"
#include "common.h"
#include "compare_out.h"
#include "evaluate_out.h"
#include "vecsift/err.h"
#include "vecsift/ofile.h"
#include "vecsift/par.h"
#include "vecsift/vecset.h"
#include "vecsift/xalloc.h"

#define MAX_VECTORS 16

static const struct cli_opt opts[] = {
    { "vectors", 'v', "<file>", "packed vector set (.vecs); repeat to compare several" },
    { "pool", 'p', "<list>", "comma-separated: mean, tfidf, sif, bow (default: tfidf; bow is always added)" },
    { "classifier", 'c', "<list>", "comma-separated: logreg, svm-linear, svm-rbf (default: logreg)" },
    { "C", 'C', "<x>", "inverse regularisation strength, > 0, for every set-up (default: 1)" },
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
    int pools[4];                    /* by enum features_pool: asked for */
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
            if (parse_list(cmd, name, val, a->pools, 4, one_pool, "mean, tfidf, sif, bow") < 0)
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
    int dense = a->pools[POOL_MEAN] || a->pools[POOL_TFIDF] || a->pools[POOL_SIF];
    if (dense && a->nvec == 0) {
        int p = a->pools[POOL_MEAN] ? POOL_MEAN : a->pools[POOL_TFIDF] ? POOL_TFIDF : POOL_SIF;
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

/* A group: the consecutive set-ups rows[first..first+n) that share one
 * vector set and pooling and differ in the classifier only. */
struct group {
    size_t first, n;
};

struct job {
    struct compare_row *rows;
    const struct group *groups;
    const struct corpus *c;
    const struct pipeline_spec *base;
    vecset **vs;
    const size_t *vidx;             /* vector set of each row (unused for bow) */
    struct cv_params cp;
    struct err *errs;               /* (groups) */
    int *failed;                    /* (groups) */
};

/* One group's cross-validation: cv_run_shared fits each fold's featurizer
 * once for all its classifiers (the same numbers as one cv_run per set-up). */
static void run_group(void *arg, size_t g)
{
    struct job *j = arg;
    const struct group *gr = &j->groups[g];
    struct compare_row *rows = j->rows + gr->first;
    struct pipeline_spec s[3];
    struct cv_result r[3];
    for (size_t q = 0; q < gr->n; q++) {
        s[q] = *j->base;
        s[q].feat.pool = rows[q].pool;
        s[q].clf = rows[q].clf;
    }
    const vecset *vs = rows[0].pool == POOL_BOW ? NULL : j->vs[j->vidx[gr->first]];
    if (cv_run_shared(r, s, gr->n, j->c, vs, &j->cp, &j->errs[g]) < 0) {
        j->failed[g] = 1;
        return;
    }
    for (size_t q = 0; q < gr->n; q++) {
        struct compare_row *row = &rows[q];
        row->r = r[q];
        size_t J = row->r.repeats * (size_t)row->r.folds;
        row->f1 = xcalloc(J, sizeof *row->f1);
        cv_fold_scores(&row->r, "macro_f1", row->f1);
        row->coverage = row->r.held_out.tokens
                            ? (double)row->r.held_out.with_vector / (double)row->r.held_out.tokens
                            : NAN;
    }
}

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
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
    for (int p = 0; p < 4; p++)
        any |= a.pools[p];
    if (!any)
        a.pools[a.nvec ? POOL_TFIDF : POOL_BOW] = 1;
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
    struct group *groups = NULL;
    struct err *errs = NULL;
    int *failed = NULL;
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
    size_t cap = 3 + a.nvec * 3 * 3;
    rows = xcalloc(cap, sizeof *rows);
    vidx = xcalloc(cap, sizeof *vidx);
    for (int k = 0; k < 3; k++)
        if (a.clfs[k])
            rows[n++] = (struct compare_row){ .pool = POOL_BOW, .clf = (enum pipeline_classifier)k };
    for (size_t v = 0; v < a.nvec; v++)
        for (int p = 0; p < 3; p++)
            for (int k = 0; k < 3 && a.pools[p]; k++)
                if (a.clfs[k]) {
                    vidx[n] = v;
                    rows[n++] = (struct compare_row){ .vectors = a.vectors[v], .pool = (enum features_pool)p,
                                                      .clf = (enum pipeline_classifier)k };
                }

    /* Groups of set-ups that differ in the classifier only (rows are in
     * that order above), side by side, one thread each; with fewer groups
     * than threads, each cross-validation uses the threads instead. */
    groups = xcalloc(n, sizeof *groups);
    size_t ng = 0;
    for (size_t i = 0; i < n; i++)
        if (i > 0 && rows[i].pool == rows[i - 1].pool && rows[i].vectors == rows[i - 1].vectors)
            groups[ng - 1].n++;
        else
            groups[ng++] = (struct group){ i, 1 };
    struct job job = { rows, groups, &c, &a.fa.spec, vs, vidx, a.cp, NULL, NULL };
    errs = xcalloc(ng, sizeof *errs);
    failed = xcalloc(ng, sizeof *failed);
    job.errs = errs;
    job.failed = failed;
    int outer = (size_t)a.da.threads <= ng ? a.da.threads : 1;
    job.cp.threads = outer > 1 ? 1 : a.da.threads;
    if (!cli_quiet)
        fprintf(stderr, "compare: %zu set-ups x %zu folds on %d threads\n", n,
                (size_t)a.cp.folds * a.cp.repeats, a.da.threads);
    double t0 = now();
    par_for(outer, ng, run_group, &job);
    double wall = now() - t0;
    for (size_t g = 0; g < ng; g++)
        if (failed[g]) {
            e = errs[g];
            goto fail;
        }
    for (size_t i = 0; i < n; i++)
        if (rows[i].r.unconverged)
            cli_warn("%zu: %d of %zu fits stopped at the iteration cap; raise --max-iter or lower --C", i + 1,
                     rows[i].r.unconverged, rows[i].r.repeats * (size_t)rows[i].r.folds);

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
    for (size_t i = 0; rows && i < n; i++) {
        cv_release(&rows[i].r);
        free(rows[i].f1);
    }
    free(rows);
    free(vidx);
    free(groups);
    free(order);
    free(errs);
    free(failed);
    for (size_t v = 0; v < a.nvec; v++)
        vecset_close(vs[v]);
    corpus_release(&c);
    return rc;
}
