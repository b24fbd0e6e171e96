/* cv.c -- repeated stratified k-fold cross-validation of a pipeline, with
 * optional nested parameter search (see cv.h).
 *
 * N = rows, K = labels, R = repeats, F = folds per repeat.
 */
#include "vecsift/cv.h"

#include <math.h>
#include <pthread.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "vecsift/corpus.h"
#include "vecsift/err.h"
#include "vecsift/fmat.h"
#include "vecsift/par.h"
#include "vecsift/rng.h"
#include "vecsift/vecset.h"
#include "vecsift/xalloc.h"

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static int argmax(const double *p, size_t k)
{
    size_t b = 0;
    for (size_t j = 1; j < k; j++)
        if (p[j] > p[b])
            b = j;
    return (int)b;
}

/* ---- nested search ---- */

/* Macro-F1 of spec 's' by inner k-fold over rows[0..n). */
static int inner_score(const struct pipeline_spec *s, const struct corpus *c, const struct vecset *vs,
                       const features_cache *cache, const size_t *rows, size_t n, const struct folds *fo,
                       double *score, struct err *e)
{
    size_t K = c->ds.nlabels;
    metrics *m = metrics_new((int)K);
    size_t *tr = xcalloc(n, sizeof *tr), *te = xcalloc(n, sizeof *te);
    double *P = xcalloc(xmul(n, K), sizeof *P);
    int rc = 0;
    for (int f = 0; f < fo->k && rc == 0; f++) {
        size_t ntr = 0, nte = 0;
        for (size_t i = 0; i < n; i++) {
            if (fo->fold[i] == f)
                te[nte++] = rows[i];
            else
                tr[ntr++] = rows[i];
        }
        pipeline *p = pipeline_fit_cached(s, &c->docs, c->ds.y, K, tr, ntr, vs, cache, NULL, e);
        if (!p) {
            rc = -1;
            break;
        }
        pipeline_proba_cached(p, cache, &c->docs, te, nte, P, NULL);
        for (size_t i = 0; i < nte; i++)
            metrics_add(m, c->ds.y[te[i]], argmax(P + i * K, K), P + i * K, NULL);
        pipeline_free(p);
    }
    if (rc == 0) {
        struct metrics_report rep = METRICS_REPORT_INIT;
        metrics_compute(m, &rep);
        *score = rep.macro_f1;
        metrics_report_release(&rep);
    }
    metrics_free(m);
    free(tr);
    free(te);
    free(P);
    return rc;
}

/* The search over rows[0..n).  With 'group' (ids of all rows of the corpus),
 * the inner folds keep each group together too, as the outer ones do:
 * otherwise copies split across inner folds would favour the settings that
 * memorise best.  '*best_score' gets the inner macro-F1 of the choice. */
static int search_rows(const struct pipeline_spec *s, const struct corpus *c, const struct vecset *vs,
                       const features_cache *cache, const size_t *rows, size_t n, const int *group, int n_groups, int inner_folds, uint64_t seed,
                       struct pipeline_spec *best, double *best_score_out, struct err *e)
{
    size_t K = c->ds.nlabels;
    int *lab = xcalloc(n, sizeof *lab);
    size_t *cnt = xcalloc(K, sizeof *cnt);
    for (size_t i = 0; i < n; i++) {
        lab[i] = c->ds.y[rows[i]];
        cnt[lab[i]]++;
    }
    size_t minc = (size_t)-1;
    for (size_t k = 0; k < K; k++)
        if (cnt[k] && cnt[k] < minc)
            minc = cnt[k];
    free(cnt);
    int kin = inner_folds < 2 ? 2 : inner_folds;
    if ((size_t)kin > minc)
        kin = (int)minc;
    *best = *s;
    if (kin < 2) {
        free(lab);
        err_set(e, c->ds.path, 0, "too few rows of some label for a parameter search inside the training rows");
        return err_hint(e, "drop --search, or label more examples of the rarest label");
    }
    struct rng r;
    rng_seed(&r, seed);
    struct folds fo = FOLDS_INIT;
    int frc;
    if (group) {
        int *g = xcalloc(n, sizeof *g);
        for (size_t i = 0; i < n; i++)
            g[i] = group[rows[i]];
        frc = folds_make_grouped(&fo, lab, g, n, (int)K, n_groups, (const char *const *)c->ds.labels, kin, 1, &r, e);
        free(g);
    } else {
        frc = folds_make(&fo, lab, n, (int)K, (const char *const *)c->ds.labels, kin, 1, &r, e);
    }
    if (frc < 0) {
        free(lab);
        return -1;
    }
    static const double gridC[] = CV_GRID_C, gridG[] = CV_GRID_GAMMA_FACTOR;
    size_t nC = sizeof gridC / sizeof gridC[0];
    size_t nG = s->clf == CLF_SVM_RBF ? sizeof gridG / sizeof gridG[0] : 1;
    double best_score = -1;
    int rc = 0;
    /* Grid order: C ascending, then gamma factor ascending; a tie keeps the
     * earlier (more regularised) setting. */
    for (size_t a = 0; a < nC && rc == 0; a++)
        for (size_t g = 0; g < nG && rc == 0; g++) {
            struct pipeline_spec t = *s;
            t.C = gridC[a];
            if (s->clf == CLF_SVM_RBF)
                t.gamma = -gridG[g];
            double sc;
            if (inner_score(&t, c, vs, cache, rows, n, &fo, &sc, e) < 0) {
                rc = -1;
                break;
            }
            if (sc > best_score + 1e-12) {
                best_score = sc;
                *best = t;
            }
        }
    folds_release(&fo);
    free(lab);
    if (best_score_out)
        *best_score_out = best_score;
    return rc;
}

int cv_search(const struct pipeline_spec *s, const struct corpus *c, const struct vecset *vs, const size_t *rows,
              size_t n, int inner_folds, uint64_t seed, struct pipeline_spec *best, struct err *e)
{
    features_cache *cache = features_cache_new(&s->feat, &c->docs, vs);
    int rc = search_rows(s, c, vs, cache, rows, n, NULL, 0, inner_folds, seed, best, NULL, e);
    features_cache_free(cache);
    return rc;
}

/* ---- the outer loop ---- */

struct task_out {
    struct err e;
    int failed;
    int unconverged, tiny;
    size_t ntrain;
    double C, gamma, inner;
    double secs;            /* this spec's time in this fold (shared featurising split evenly) */
    struct features_stats st;
};

struct ctx {
    const struct pipeline_spec *s;  /* (ns) */
    size_t ns;
    const struct corpus *c;
    const struct vecset *vs;
    const struct cv_params *p;
    struct cv_result *r;    /* (ns); every r[j].f is the same assignment */
    const features_cache *cache;  /* pooled rows shared by every fit */
    struct rng base;
    struct task_out *out;   /* (ns, R * F) */
};

static void scatter(struct cv_result *r, size_t rep, const size_t *te, size_t nte, const double *P)
{
    size_t N = r->n, K = r->k;
    double *dst = r->proba + rep * N * K;
    for (size_t i = 0; i < nte; i++)
        memcpy(dst + te[i] * K, P + i * K, K * sizeof *P);
}

/* Spec j on its own: (search,) fit, predict. */
static void fit_one(struct ctx *x, size_t j, size_t task, size_t rep, const size_t *tr, size_t ntr, const size_t *te,
                    size_t nte, struct rng tr_rng)
{
    double t0 = now();
    size_t T = x->r->repeats * (size_t)x->r->folds, K = x->r->k;
    struct task_out *o = &x->out[j * T + task];
    const struct pipeline_spec *s = &x->s[j];
    o->ntrain = ntr;
    struct pipeline_spec spec = *s;
    if (x->p->search && search_rows(s, x->c, x->vs, x->cache, tr, ntr, x->p->group, x->p->n_groups, x->p->inner_folds,
                                    rng_next(&tr_rng), &spec, &o->inner, &o->e) < 0) {
        o->failed = 1;
        return;
    }
    o->C = pipeline_spec_C(&spec);
    o->gamma = spec.gamma < 0 ? -spec.gamma : 1.0;
    struct pipeline_fit_info info;
    pipeline *pl = pipeline_fit_cached(&spec, &x->c->docs, x->c->ds.y, K, tr, ntr, x->vs, x->cache, &info, &o->e);
    if (!pl) {
        o->failed = 1;
        return;
    }
    o->unconverged = !info.converged;
    o->tiny = info.tiny_label;
    double *P = xcalloc(xmul(nte ? nte : 1, K), sizeof *P);
    pipeline_proba_cached(pl, x->cache, &x->c->docs, te, nte, P, &o->st);
    scatter(&x->r[j], rep, te, nte, P);
    free(P);
    pipeline_free(pl);
    o->secs = now() - t0;
}

/* Every spec on one featurizer: the featurizer is fitted and the rows
 * featurized once, then each classifier is fitted on the same matrix.  The
 * same calls, in the same order, as fit_one makes per spec, so the same
 * numbers. */
static void fit_shared(struct ctx *x, size_t task, size_t rep, const size_t *tr, size_t ntr, const size_t *te,
                       size_t nte)
{
    double t0 = now();
    size_t T = x->r->repeats * (size_t)x->r->folds, K = x->r->k;
    const struct corpus *c = x->c;
    struct task_out *o0 = &x->out[task];
    struct fmat Xtr = FMAT_INIT, Xte = FMAT_INIT;
    featurizer *fz = features_fit_transform(&x->s[0].feat, &c->docs, tr, ntr, x->vs, x->cache, &Xtr, NULL, &o0->e);
    if (!fz) {
        fmat_release(&Xtr);
        for (size_t j = 0; j < x->ns; j++) {
            x->out[j * T + task].e = o0->e;
            x->out[j * T + task].failed = 1;
        }
        return;
    }
    struct features_stats st;
    memset(&st, 0, sizeof st);
    features_transform_cached(fz, x->cache, &c->docs, te, nte, &Xte, &st);
    int *yy = xcalloc(ntr ? ntr : 1, sizeof *yy);
    for (size_t i = 0; i < ntr; i++)
        yy[i] = c->ds.y[tr[i]];
    double *P = xcalloc(xmul(nte ? nte : 1, K), sizeof *P);
    double share = (now() - t0) / (double)x->ns;
    for (size_t j = 0; j < x->ns; j++) {
        double t1 = now();
        struct task_out *o = &x->out[j * T + task];
        const struct pipeline_spec *s = &x->s[j];
        o->ntrain = ntr;
        o->C = pipeline_spec_C(s);
        o->gamma = s->gamma < 0 ? -s->gamma : 1.0;
        o->st = st;
        struct pipeline_fit_info info;
        memset(&info, 0, sizeof info);
        if (pipeline_fit_proba_featurized(s, K, &Xtr, yy, &Xte, P, &info, &o->e) < 0) {
            o->failed = 1;
            continue;
        }
        o->unconverged = !info.converged;
        o->tiny = info.tiny_label;
        scatter(&x->r[j], rep, te, nte, P);
        o->secs = share + (now() - t1);
    }
    free(P);
    free(yy);
    fmat_release(&Xtr);
    fmat_release(&Xte);
    features_free(fz);
}

static void one_fold(void *arg, size_t task)
{
    struct ctx *x = arg;
    struct cv_result *r = x->r;
    size_t N = r->n, K = r->k, T = r->repeats * (size_t)r->folds, rep = task / (size_t)r->folds;
    int f = (int)(task % (size_t)r->folds);
    const int *fold = folds_repeat(&r->f, rep);
    size_t *tr = xcalloc(N, sizeof *tr), *te = xcalloc(N, sizeof *te);
    size_t ntr = 0, nte = 0;
    for (size_t i = 0; i < N; i++) {
        if (fold[i] == f)
            te[nte++] = i;
        else
            tr[ntr++] = i;
    }
    struct rng tr_rng;
    rng_child(&x->base, 1000003ULL * (rep + 1) + (uint64_t)f, &tr_rng);
    if (x->p->train_fraction < 1.0) {
        size_t *sub = xcalloc(ntr ? ntr : 1, sizeof *sub);
        struct task_out *o = &x->out[task];
        size_t m = folds_subsample(tr, ntr, x->c->ds.y, (int)K, x->p->train_fraction, &tr_rng, sub, &o->e);
        if (m == 0) {
            for (size_t j = 0; j < x->ns; j++) {
                x->out[j * T + task].e = o->e;
                x->out[j * T + task].failed = 1;
            }
            free(sub);
            goto out;
        }
        free(tr);
        tr = sub;
        ntr = m;
    }
    if (x->ns > 1 && !x->p->search)
        fit_shared(x, task, rep, tr, ntr, te, nte);
    else
        for (size_t j = 0; j < x->ns; j++)
            fit_one(x, j, task, rep, tr, ntr, te, nte, tr_rng);
out:
    free(tr);
    free(te);
}

/* Summaries of one spec's finished folds 'out' (R * F), in a fixed order. */
static int summarise(struct cv_result *r, const struct task_out *out, const struct pipeline_spec *s,
                     const struct corpus *c, const struct cv_params *p, struct err *e)
{
    size_t N = r->n, K = r->k, T = p->repeats * (size_t)p->folds;
    if (p->search) {
        r->chosen_C = xcalloc(T, sizeof *r->chosen_C);
        r->chosen_score = xcalloc(T, sizeof *r->chosen_score);
        if (s->clf == CLF_SVM_RBF)
            r->chosen_gamma = xcalloc(T, sizeof *r->chosen_gamma);
    }
    double ntrain = 0;
    for (size_t t = 0; t < T; t++) {
        r->unconverged += out[t].unconverged;
        r->tiny_label |= out[t].tiny;
        r->held_out.tokens += out[t].st.tokens;
        r->held_out.with_vector += out[t].st.with_vector;
        r->held_out.empty_rows += out[t].st.empty_rows;
        ntrain += (double)out[t].ntrain;
        if (r->chosen_C) {
            r->chosen_C[t] = out[t].C;
            r->chosen_score[t] = out[t].inner;
        }
        if (r->chosen_gamma)
            r->chosen_gamma[t] = out[t].gamma;
    }
    r->train_rows = (size_t)llround(ntrain / (double)T);

    r->pred = xcalloc(xmul(p->repeats, N), sizeof *r->pred);
    r->all = metrics_new((int)K);
    r->per_fold = xcalloc(T, sizeof *r->per_fold);
    for (size_t rep = 0; rep < p->repeats; rep++) {
        const int *fold = folds_repeat(&r->f, rep);
        for (int f = 0; f < p->folds; f++) {
            metrics *m = metrics_new((int)K);
            for (size_t i = 0; i < N; i++) {
                if (fold[i] != f)
                    continue;
                const double *pr = r->proba + (rep * N + i) * K;
                int pred = argmax(pr, K);
                r->pred[rep * N + i] = pred;
                metrics_add(m, c->ds.y[i], pred, pr, NULL);
            }
            metrics_compute(m, &r->per_fold[rep * (size_t)p->folds + (size_t)f]);
            metrics_free(m);
        }
        for (size_t i = 0; i < N; i++)
            metrics_add(r->all, c->ds.y[i], r->pred[rep * N + i], r->proba + (rep * N + i) * K, NULL);
    }
    metrics_compute(r->all, &r->pooled);
    return metrics_summarize(r->per_fold, T, &r->spread, e);
}

/* The fold assignment of 'p' into 'f', drawing from 'g' (seeded with p->seed). */
static int make_folds(struct folds *f, const struct corpus *c, const struct cv_params *p, struct rng *g,
                      struct err *e)
{
    size_t N = c->ds.n, K = c->ds.nlabels;
    int rc;
    if (p->group)
        rc = folds_make_grouped(f, c->ds.y, p->group, N, (int)K, p->n_groups, (const char *const *)c->ds.labels,
                                p->folds, p->repeats, g, e);
    else
        rc = folds_make(f, c->ds.y, N, (int)K, (const char *const *)c->ds.labels, p->folds, p->repeats, g, e);
    if (rc < 0) {
        struct err in = *e; /* the folds module knows no file name: add it */
        err_clear(e);
        err_set(e, c->ds.path, 0, "%s", in.msg);
        e->code = in.code;
        if (in.hint[0])
            err_hint(e, "%s", in.hint);
    }
    return rc;
}

static int same_features(const struct features_params *a, const struct features_params *b)
{
    return a->pool == b->pool && a->sublinear_tf == b->sublinear_tf && a->sif_a == b->sif_a &&
           a->bigrams == b->bigrams && a->min_df == b->min_df && a->scale == b->scale;
}

int cv_run_shared(struct cv_result *r, const struct pipeline_spec *s, size_t ns, const struct corpus *c,
                  const struct vecset *vs, const struct cv_params *p, struct err *e)
{
    for (size_t j = 0; j < ns; j++)
        memset(&r[j], 0, sizeof r[j]);
    double t0 = now();
    size_t N = c->ds.n, K = c->ds.nlabels;
    if (!c->ds.y) {
        err_set(e, c->ds.path, 0, "cross-validation needs labelled rows");
        return -1;
    }
    if (K < 2) {
        err_set(e, c->ds.path, 0, "only one label ('%s'); there is nothing to tell apart", K ? c->ds.labels[0] : "");
        return -1;
    }
    for (size_t j = 1; j < ns; j++)
        if (!same_features(&s[j].feat, &s[0].feat)) {
            err_set(e, NULL, 0, "shared cross-validation needs the same feature settings for every classifier");
            return -1;
        }
    struct ctx x = { s, ns, c, vs, p, r, NULL, { { 0 } }, NULL };
    rng_seed(&x.base, p->seed);
    for (size_t j = 0; j < ns; j++) {
        r[j].n = N;
        r[j].k = K;
        r[j].repeats = p->repeats;
        r[j].folds = p->folds;
        /* The same assignment for each: the same seed, the same draws.  The
         * first one's draws leave x.base where the folds' rngs start. */
        struct rng g;
        rng_seed(&g, p->seed);
        if (make_folds(&r[j].f, c, p, j == 0 ? &x.base : &g, e) < 0) {
            for (size_t q = 0; q <= j; q++)
                cv_release(&r[q]);
            return -1;
        }
        r[j].proba = xcalloc(xmul(xmul(p->repeats, N), K), sizeof *r[j].proba);
    }
    size_t T = p->repeats * (size_t)p->folds;
    x.out = xcalloc(xmul(ns, T), sizeof *x.out);
    features_cache *cache = features_cache_new(&s[0].feat, &c->docs, vs);
    x.cache = cache;
    par_for(p->threads, T, one_fold, &x);
    features_cache_free(cache);

    /* Report the failure of the first task in spec then task order, whichever
     * thread hit it first, so the message does not depend on scheduling. */
    int rc = 0;
    for (size_t t = 0; t < ns * T && rc == 0; t++)
        if (x.out[t].failed) {
            *e = x.out[t].e;
            rc = -1;
        }
    double busy = 0, spent[64] = { 0 }, *sp = ns <= 64 ? spent : xcalloc(ns, sizeof *sp);
    for (size_t j = 0; j < ns && rc == 0; j++) {
        if (summarise(&r[j], x.out + j * T, &s[j], c, p, e) < 0)
            rc = -1;
        for (size_t t = 0; t < T; t++)
            sp[j] += x.out[j * T + t].secs;
        busy += sp[j];
    }
    double wall = now() - t0;
    for (size_t j = 0; j < ns && rc == 0; j++)
        r[j].seconds = ns == 1 || !(busy > 0) ? wall / (double)ns : wall * sp[j] / busy;
    if (sp != spent)
        free(sp);
    free(x.out);
    if (rc < 0)
        for (size_t j = 0; j < ns; j++)
            cv_release(&r[j]);
    return rc;
}

int cv_run(struct cv_result *r, const struct pipeline_spec *s, const struct corpus *c, const struct vecset *vs,
           const struct cv_params *p, struct err *e)
{
    return cv_run_shared(r, s, 1, c, vs, p, e);
}

void cv_release(struct cv_result *r)
{
    size_t T = r->repeats * (size_t)r->folds;
    folds_release(&r->f);
    free(r->proba);
    free(r->pred);
    free(r->chosen_C);
    free(r->chosen_gamma);
    free(r->chosen_score);
    for (size_t t = 0; r->per_fold && t < T; t++)
        metrics_report_release(&r->per_fold[t]);
    free(r->per_fold);
    metrics_report_release(&r->pooled);
    metrics_fold_summary_release(&r->spread);
    metrics_free(r->all);
    memset(r, 0, sizeof *r);
}

size_t cv_fold_scores(const struct cv_result *r, const char *name, double *out)
{
    size_t T = r->repeats * (size_t)r->folds;
    for (size_t t = 0; t < T; t++) {
        const struct metrics_report *m = &r->per_fold[t];
        if (strcmp(name, "macro_f1") == 0)
            out[t] = m->macro_f1;
        else if (strcmp(name, "accuracy") == 0)
            out[t] = m->accuracy;
        else if (strcmp(name, "weighted_f1") == 0)
            out[t] = m->weighted_f1;
        else if (strcmp(name, "log_loss") == 0)
            out[t] = m->log_loss;
        else
            return 0;
    }
    return T;
}
