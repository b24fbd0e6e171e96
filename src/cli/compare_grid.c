/* compare_grid.c -- compare's grid: build the set-ups, cross-validate them
 * on shared folds, and choose one for `train --choose` (see
 * compare_grid.h).
 *
 * Every set-up is cross-validated with the same cv_params (folds, repeats,
 * seed), which makes the same fold assignment, so per-fold scores pair up.
 * Set-ups that differ only in the classifier form a group and go through
 * one cv_run_shared, which featurizes each fold once for all of them.  The
 * groups run side by side, one per thread; cv's results do not depend on
 * the thread count (svmfit's rand() is per thread), so neither does the
 * comparison.
 */
#include "compare_grid.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "vecsift/err.h"
#include "vecsift/jsonv.h"
#include "vecsift/par.h"
#include "vecsift/xalloc.h"

struct compare_row *compare_grid_rows(const char *const *vectors, size_t nvec, const int *pools, const int *clfs,
                                      size_t **vidx, size_t *n)
{
    size_t cap = 3 + nvec * FEATURES_POOLS * 3, m = 0;
    struct compare_row *rows = xcalloc(cap, sizeof *rows);
    *vidx = xcalloc(cap, sizeof **vidx);
    for (int k = 0; k < 3; k++)
        if (clfs[k])
            rows[m++] = (struct compare_row){ .pool = POOL_BOW, .clf = (enum pipeline_classifier)k };
    for (size_t v = 0; v < nvec; v++)
        for (int p = 0; p < FEATURES_POOLS; p++)
            for (int k = 0; k < 3 && pools[p] && p != POOL_BOW; k++)
                if (clfs[k]) {
                    (*vidx)[m] = v;
                    rows[m++] = (struct compare_row){ .vectors = vectors[v], .pool = (enum features_pool)p,
                                                      .clf = (enum pipeline_classifier)k };
                }
    *n = m;
    return rows;
}

void compare_grid_free(struct compare_row *rows, size_t n)
{
    for (size_t i = 0; rows && i < n; i++) {
        cv_release(&rows[i].r);
        free(rows[i].f1);
    }
    free(rows);
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
    struct vecset *const *vs;
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
    const struct vecset *vs = features_pool_needs_vectors(rows[0].pool) ? j->vs[j->vidx[gr->first]] : NULL;
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

int compare_grid_run(struct compare_row *rows, size_t n, const size_t *vidx, const struct corpus *c,
                     const struct pipeline_spec *base, struct vecset *const *vs, const struct cv_params *cp,
                     double *wall, struct err *e)
{
    /* Groups of set-ups that differ in the classifier only (rows are in
     * that order), side by side, one thread each; with fewer groups
     * than threads, each cross-validation uses the threads instead. */
    struct group *groups = xcalloc(n ? n : 1, sizeof *groups);
    size_t ng = 0;
    for (size_t i = 0; i < n; i++)
        if (i > 0 && rows[i].pool == rows[i - 1].pool && rows[i].vectors == rows[i - 1].vectors)
            groups[ng - 1].n++;
        else
            groups[ng++] = (struct group){ i, 1 };
    struct err *errs = xcalloc(ng ? ng : 1, sizeof *errs);
    int *failed = xcalloc(ng ? ng : 1, sizeof *failed);
    struct job job = { rows, groups, c, base, vs, vidx, *cp, errs, failed };
    int outer = (size_t)cp->threads <= ng ? cp->threads : 1;
    job.cp.threads = outer > 1 ? 1 : cp->threads;
    double t0 = now();
    par_for(outer, ng, run_group, &job);
    *wall = now() - t0;
    int rc = 0;
    for (size_t g = 0; g < ng && rc == 0; g++)
        if (failed[g]) {
            *e = errs[g];
            rc = -1;
        }
    for (size_t i = 0; rc == 0 && i < n; i++)
        if (rows[i].r.unconverged)
            cli_warn("%zu: %d of %zu fits stopped at the iteration cap; raise --max-iter or lower --C", i + 1,
                     rows[i].r.unconverged, rows[i].r.repeats * (size_t)rows[i].r.folds);
    free(groups);
    free(errs);
    free(failed);
    return rc;
}

int compare_level(const struct compare_row *row)
{
    return row->clf == CLF_SVM_RBF;
}

size_t compare_choose(const struct compare_row *rows, const size_t *order, size_t n)
{
    size_t pick = order[0];
    for (size_t q = 1; q < n; q++) {
        const struct compare_row *r = &rows[order[q]];
        if (r->not_worse && compare_level(r) < compare_level(&rows[pick]))
            pick = order[q];
    }
    return pick;
}

/* ---- train --choose ---- */

static const char *const LEVEL_NAME[] = { "a linear classifier (its top words explain each prediction)",
                                          "the RBF kernel" };

static const char *RULE =
    "Every set-up is cross-validated on the same folds and ranked by mean macro-F1; each is tested against "
    "the best with the corrected resampled t-test (Nadeau and Bengio 2003), one-sided at 5%. Of the set-ups "
    "not significantly worse than the best, the simpler level is kept (0: a linear classifier, on any "
    "features, whose scores split into one term per word; 1: the RBF kernel), and within it the highest mean "
    "macro-F1. Then C: the chosen set-up is cross-validated on the same folds at its default C times 0.1, 0.3, "
    "1, 3 and 10 (unless --C was given), and the C of the highest mean macro-F1 is kept (a tie keeps the "
    "smaller C).";

/* The second level of --choose: C for the chosen set-up, on the same
 * folds (cp's seed makes the same assignment), training rows only.
 * Writes the chosen C to chosen->C and the table to 'json'; prints it to
 * 'fp' (may be NULL). */
static const double C_FACTORS[] = { 0.1, 0.3, 1.0, 3.0, 10.0 };
#define N_C_FACTORS (sizeof C_FACTORS / sizeof C_FACTORS[0])

static int choose_C(const struct corpus *c, struct vecset *vs, const struct cv_params *cp, FILE *fp,
                    struct pipeline_spec *chosen, cJSON *json, struct err *e)
{
    struct pipeline_spec s[N_C_FACTORS];
    struct cv_result r[N_C_FACTORS];
    double base = pipeline_spec_C(chosen);
    for (size_t q = 0; q < N_C_FACTORS; q++) {
        s[q] = *chosen;
        s[q].C = base * C_FACTORS[q];
    }
    const struct vecset *v = features_pool_needs_vectors(chosen->feat.pool) ? vs : NULL;
    if (cv_run_shared(r, s, N_C_FACTORS, c, v, cp, e) < 0)
        return -1;
    size_t best = 0;
    for (size_t q = 1; q < N_C_FACTORS; q++)
        if (r[q].spread.macro_f1.mean > r[best].spread.macro_f1.mean)
            best = q;
    cJSON *tab = cJSON_AddArrayToObject(json, "C_results");
    if (fp)
        fprintf(fp, "\nC for the chosen set-up (the same folds):\n");
    for (size_t q = 0; q < N_C_FACTORS; q++) {
        cJSON *o = cJSON_CreateObject();
        cJSON_AddItemToObject(o, "C", jsonv_number_new(s[q].C));
        cJSON_AddItemToObject(o, "macro_f1", jsonv_number_new(r[q].spread.macro_f1.mean));
        cJSON_AddItemToObject(o, "macro_f1_sd", jsonv_number_new(r[q].spread.macro_f1.sd));
        cJSON_AddBoolToObject(o, "chosen", q == best);
        cJSON_AddItemToArray(tab, o);
        if (fp)
            fprintf(fp, "  C %-8g macro F1 %.3f \xC2\xB1 %.3f%s\n", s[q].C, r[q].spread.macro_f1.mean,
                    r[q].spread.macro_f1.sd, q == best ? "  (chosen)" : "");
        cv_release(&r[q]);
    }
    chosen->C = s[best].C;
    cJSON_AddItemToObject(json, "C", jsonv_number_new(chosen->C));
    return 0;
}

int compare_grid_choose(const struct corpus *c, const char *data, const struct common_data *da,
                        const struct common_fit *fa, struct vecset *vs, const struct cv_params *cp, FILE *fp,
                        struct pipeline_spec *chosen, struct cJSON **json, struct err *e)
{
    int pools[FEATURES_POOLS] = { 0 }, clfs[3] = { 0 };
    for (int p = 0; p < FEATURES_POOLS; p++)
        pools[p] = vs != NULL || p == POOL_BOW;
    clfs[CLF_LOGREG] = clfs[CLF_SVM_RBF] = 1;
    const char *vectors[1] = { fa->vectors };
    struct vecset *vsa[1] = { vs };
    size_t n, *vidx = NULL, *order = NULL;
    struct compare_row *rows = compare_grid_rows(vectors, vs ? 1 : 0, pools, clfs, &vidx, &n);
    if (fp)
        fprintf(fp, "choosing a set-up: %zu set-ups x %zu folds on %d threads\n", n,
                (size_t)cp->folds * cp->repeats, cp->threads);
    double wall;
    int rc = compare_grid_run(rows, n, vidx, c, &fa->spec, vsa, cp, &wall, e);
    double nte = (double)c->ds.n / (double)cp->folds;
    struct compare_setup s = { data, da, &fa->spec, cp, c->ds.n, c->ds.nlabels, nte, (double)c->ds.n - nte,
                               0.05, wall, cp->threads };
    order = xcalloc(n, sizeof *order);
    if (rc == 0)
        rc = compare_rank(rows, n, &s, order, e);
    if (rc == 0) {
        size_t pick = compare_choose(rows, order, n), rank = 0;
        while (order[rank] != pick)
            rank++;
        const struct compare_row *r = &rows[pick];
        *chosen = fa->spec;
        chosen->feat.pool = r->pool;
        chosen->clf = r->clf;
        char name[600], best[600];
        compare_row_name(r, name, sizeof name);
        compare_row_name(&rows[order[0]], best, sizeof best);
        if (fp) {
            compare_terminal(fp, rows, order, n, &s);
            char line[2000];
            if (pick == order[0])
                snprintf(line, sizeof line, "chose %s: macro F1 %.3f ± %.3f, the best of %zu set-ups", name,
                         r->r.spread.macro_f1.mean, r->r.spread.macro_f1.sd, n);
            else
                snprintf(line, sizeof line,
                         "chose %s: macro F1 %.3f ± %.3f, not significantly worse than the best, %s "
                         "(%.3f; p = %.3f), and simpler: %s", name, r->r.spread.macro_f1.mean,
                         r->r.spread.macro_f1.sd, best, rows[order[0]].r.spread.macro_f1.mean, r->p_vs_best,
                         LEVEL_NAME[compare_level(r)]);
            fputc('\n', fp);
            compare_wrap(fp, line, 100);
        }
        cJSON *js = compare_json(rows, order, n, &s);
        cJSON *res = cJSON_GetObjectItemCaseSensitive(js, "results");
        size_t q = 0;
        for (cJSON *o = res ? res->child : NULL; o; o = o->next, q++) {
            cJSON_DeleteItemFromObjectCaseSensitive(o, "seconds");
            cJSON_AddNumberToObject(o, "level", compare_level(&rows[order[q]]));
            cJSON_AddBoolToObject(o, "chosen", order[q] == pick);
        }
        *json = cJSON_CreateObject();
        cJSON_AddStringToObject(*json, "rule", RULE);
        cJSON_AddNumberToObject(*json, "chosen", (double)(rank + 1));
        cJSON_AddItemToObject(*json, "settings", cJSON_DetachItemFromObjectCaseSensitive(js, "settings"));
        cJSON_AddItemToObject(*json, "results", cJSON_DetachItemFromObjectCaseSensitive(js, "results"));
        cJSON_Delete(js);
        if (!(fa->spec.C > 0))
            rc = choose_C(c, vs, cp, fp, chosen, *json, e);
        else
            cJSON_AddItemToObject(*json, "C", jsonv_number_new(chosen->C));
    }
    compare_grid_free(rows, n);
    free(vidx);
    free(order);
    return rc;
}
