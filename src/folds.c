/* folds.c -- stratified (and group-stratified) repeated k-fold assignment and
 * stratified subsampling.  It decides which rows are held out; it does not
 * fit anything.  See folds.h for the guarantees each function gives.
 */
#include "vecsift/folds.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/rng.h"
#include "vecsift/xalloc.h"

/* ---- checks shared by both assignments ---- */

static const char *label_name(const char *const *names, int j, char *buf, size_t len)
{
    if (names && names[j])
        return names[j];
    snprintf(buf, len, "#%d", j);
    return buf;
}

/* Count rows per label into cnt (K) and check the settings. */
static int check_labels(const int *label, size_t n, int K, const char *const *names,
                        int k, size_t *cnt, struct err *e)
{
    char buf[32];
    if (k < 2)
        return err_set(e, NULL, 0, "number of folds must be at least 2, got %d", k);
    if ((size_t)k > n)
        return err_set(e, NULL, 0, "%d folds need at least %d rows, the data has %zu", k, k, n);
    memset(cnt, 0, (size_t)K * sizeof *cnt);
    for (size_t i = 0; i < n; i++) {
        if (label[i] < 0 || label[i] >= K)
            return err_set(e, NULL, 0, "row %zu: label index %d is outside [0, %d)", i, label[i], K);
        cnt[label[i]]++;
    }
    int present = 0;
    for (int j = 0; j < K; j++)
        present += cnt[j] > 0;
    if (present < 2)
        return err_set(e, NULL, 0, "the data has only one label; cross-validation needs at least two");
    for (int j = 0; j < K; j++) {
        if (cnt[j] > 0 && cnt[j] < (size_t)k) {
            const char *nm = label_name(names, j, buf, sizeof buf);
            err_set(e, NULL, 0, "label '%s' has %zu rows, fewer than the %d folds", nm, cnt[j], k);
            return err_hint(e, "lower --folds to %zu or fewer, or merge '%s' into another label",
                            cnt[j] < 2 ? (size_t)2 : cnt[j], nm);
        }
    }
    return 0;
}

static void alloc_table(struct folds *f, size_t n, int k, size_t repeats)
{
    f->n_rows = n;
    f->n_repeats = repeats;
    f->k = k;
    f->fold = xmalloc(xmul(xmul(n, repeats), sizeof *f->fold));
}

/* ---- plain stratified ---- */

int folds_make(struct folds *f, const int *label, size_t n, int n_labels,
               const char *const *names, int k, size_t repeats,
               const struct rng *seed, struct err *e)
{
    const int K = n_labels;
    *f = (struct folds)FOLDS_INIT;
    if (K < 1)
        return err_set(e, NULL, 0, "no labels");
    if (repeats < 1)
        return err_set(e, NULL, 0, "number of repeats must be at least 1");
    size_t *cnt = xcalloc((size_t)K, sizeof *cnt);
    if (check_labels(label, n, K, names, k, cnt, e) < 0) {
        free(cnt);
        return -1;
    }
    /* Rows grouped by label: start[j] .. start[j+1] in 'byl'. */
    size_t *start = xcalloc((size_t)K + 1, sizeof *start);
    for (int j = 0; j < K; j++)
        start[j + 1] = start[j] + cnt[j];
    size_t *byl = xmalloc(xmul(n, sizeof *byl));
    size_t *fill = xcalloc((size_t)K, sizeof *fill);
    for (size_t i = 0; i < n; i++)
        byl[start[label[i]] + fill[label[i]]++] = i;

    alloc_table(f, n, k, repeats);
    for (size_t r = 0; r < repeats; r++) {
        struct rng g;
        rng_child(seed, (uint64_t)r, &g);
        int *fr = f->fold + r * n;
        /* The dealing position carries over from label to label, so fold
         * sizes stay within one row of each other; it starts at a random fold
         * so that fold 0 is not always the largest. */
        size_t pos = (size_t)rng_below(&g, (uint64_t)k);
        for (int j = 0; j < K; j++) {
            rng_shuffle(&g, byl + start[j], cnt[j]);
            for (size_t t = start[j]; t < start[j + 1]; t++)
                fr[byl[t]] = (int)(pos++ % (size_t)k);
        }
    }
    free(cnt);
    free(start);
    free(byl);
    free(fill);
    return 0;
}

/* ---- group stratified ---- */

struct grp {
    int id;
    size_t size;
    size_t order;       /* random tie-break among equal sizes */
};

static int by_size_desc(const void *a, const void *b)
{
    const struct grp *x = a, *y = b;
    if (x->size != y->size)
        return x->size > y->size ? -1 : 1;
    return (x->order > y->order) - (x->order < y->order);
}

int folds_make_grouped(struct folds *f, const int *label, const int *group,
                       size_t n, int n_labels, int n_groups,
                       const char *const *names, int k, size_t repeats,
                       const struct rng *seed, struct err *e)
{
    const int K = n_labels, G = n_groups;
    *f = (struct folds)FOLDS_INIT;
    if (K < 1 || G < 1)
        return err_set(e, NULL, 0, "no labels or no groups");
    if (repeats < 1)
        return err_set(e, NULL, 0, "number of repeats must be at least 1");
    size_t *cnt = xcalloc((size_t)K, sizeof *cnt);
    size_t *gl = NULL, *fl = NULL, *fsize = NULL;
    struct grp *gs = NULL;
    int *gfold = NULL;
    int ret = -1;
    if (check_labels(label, n, K, names, k, cnt, e) < 0)
        goto out;
    gl = xcalloc(xmul((size_t)G, (size_t)K), sizeof *gl);   /* (G, K) label counts per group */
    for (size_t i = 0; i < n; i++) {
        if (group[i] < 0 || group[i] >= G) {
            err_set(e, NULL, 0, "row %zu: group index %d is outside [0, %d)", i, group[i], G);
            goto out;
        }
        gl[(size_t)group[i] * K + label[i]]++;
    }
    gs = xmalloc(xmul((size_t)G, sizeof *gs));
    int ng = 0;
    for (int g = 0; g < G; g++) {
        size_t s = 0;
        for (int j = 0; j < K; j++)
            s += gl[(size_t)g * K + j];
        if (s > 0)
            gs[ng++] = (struct grp){ g, s, 0 };
    }
    if (ng < k) {
        err_set(e, NULL, 0, "%d folds need at least %d groups, the data has %d", k, k, ng);
        err_hint(e, "lower --folds to %d or fewer", ng < 2 ? 2 : ng);
        goto out;
    }
    fl = xmalloc(xmul((size_t)k, (size_t)K) * sizeof *fl);     /* (k, K) */
    fsize = xmalloc((size_t)k * sizeof *fsize);
    gfold = xmalloc((size_t)G * sizeof *gfold);
    alloc_table(f, n, k, repeats);
    for (size_t r = 0; r < repeats; r++) {
        struct rng rg;
        rng_child(seed, (uint64_t)r, &rg);
        size_t *perm = xmalloc((size_t)ng * sizeof *perm);
        for (int t = 0; t < ng; t++)
            perm[t] = (size_t)t;
        rng_shuffle(&rg, perm, (size_t)ng);
        for (int t = 0; t < ng; t++)
            gs[perm[t]].order = (size_t)t;
        free(perm);
        qsort(gs, (size_t)ng, sizeof *gs, by_size_desc);
        memset(fl, 0, (size_t)k * K * sizeof *fl);
        memset(fsize, 0, (size_t)k * sizeof *fsize);
        for (int t = 0; t < ng; t++) {
            const size_t *c = gl + (size_t)gs[t].id * K;
            int best = 0;
            double best_cost = INFINITY;
            for (int q = 0; q < k; q++) {
                /* Increase of sum_j (fl[q][j] - n_j/k)^2 when the group joins q. */
                double cost = 0;
                for (int j = 0; j < K; j++) {
                    double target = (double)cnt[j] / k;
                    double before = (double)fl[(size_t)q * K + j] - target;
                    double after = before + (double)c[j];
                    cost += after * after - before * before;
                }
                if (cost < best_cost - 1e-9 ||
                    (fabs(cost - best_cost) <= 1e-9 && fsize[q] < fsize[best])) {
                    best = q;
                    best_cost = cost;
                }
            }
            for (int j = 0; j < K; j++)
                fl[(size_t)best * K + j] += c[j];
            fsize[best] += gs[t].size;
            gfold[gs[t].id] = best;
        }
        int *fr = f->fold + r * n;
        for (size_t i = 0; i < n; i++)
            fr[i] = gfold[group[i]];
    }
    ret = 0;
out:
    if (ret < 0)
        folds_release(f);
    free(cnt);
    free(gl);
    free(gs);
    free(fl);
    free(fsize);
    free(gfold);
    return ret;
}

/* ---- access ---- */

const int *folds_repeat(const struct folds *f, size_t r)
{
    return f->fold + r * f->n_rows;
}

void folds_release(struct folds *f)
{
    if (!f)
        return;
    free(f->fold);
    *f = (struct folds)FOLDS_INIT;
}

/* ---- subsampling for learning curves ---- */

static int cmp_size(const void *a, const void *b)
{
    size_t x = *(const size_t *)a, y = *(const size_t *)b;
    return (x > y) - (x < y);
}

size_t folds_subsample(const size_t *rows, size_t n, const int *label, int n_labels,
                       double fraction, struct rng *r, size_t *out, struct err *e)
{
    if (!(fraction > 0.0 && fraction <= 1.0)) {
        err_set(e, NULL, 0, "subsample fraction must be in (0, 1], got %g", fraction);
        return 0;
    }
    size_t m = 0;
    size_t *tmp = xmalloc(xmul(n ? n : 1, sizeof *tmp));
    for (int j = 0; j < n_labels; j++) {
        size_t nj = 0;
        for (size_t t = 0; t < n; t++)
            if (label[rows[t]] == j)
                tmp[nj++] = rows[t];
        if (nj == 0)
            continue;
        size_t take = (size_t)floor(fraction * (double)nj + 0.5);
        if (take < 1)
            take = 1;
        if (take > nj)
            take = nj;
        rng_shuffle(r, tmp, nj);
        memcpy(out + m, tmp, take * sizeof *tmp);
        m += take;
    }
    free(tmp);
    qsort(out, m, sizeof *out, cmp_size);
    return m;
}
