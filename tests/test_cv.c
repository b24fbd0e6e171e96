/* test_cv.c -- cross-validation of a pipeline (cv_run, cv_search).
 *
 * Checked, on an invented ticket set written to a temporary CSV:
 *   - each repeat's folds partition the rows, and repeats differ (the
 *     definition of repeated k-fold; common practice);
 *   - no leak: the out-of-fold probabilities of a fold are bit for bit those
 *     of a pipeline fitted on that fold's training rows alone (the rule of
 *     cv.h and DESIGN.md: a held-out row never informs its own prediction);
 *   - pooled figures count every out-of-fold row of every repeat, and the
 *     predicted label is the most probable one;
 *   - 1 and 2 threads give identical results (DESIGN.md, Conventions);
 *   - the nested search picks C from CV_GRID_C, and cv_search on a fold's
 *     training rows is what each fold used;
 *   - one label, and a label rarer than the folds, are refused with the label
 *     named.
 */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "vecsift/corpus.h"
#include "vecsift/cv.h"
#include "vecsift/err.h"
#include "vecsift/rng.h"

static char path[64];

/* A new temporary CSV at 'path' with its header written, and a seeded rng. */
static FILE *open_set(const char *header, struct rng *r, uint64_t seed)
{
    strcpy(path, "/tmp/vecsift-test-cv-XXXXXX");
    int fd = mkstemp(path);
    cr_assert(fd >= 0);
    FILE *fp = fdopen(fd, "w");
    fprintf(fp, "%s\n", header);
    rng_seed(r, seed);
    return fp;
}

/* An invented inbox: three queues with their own words, shared filler, and
 * some rows that borrow a word of another queue.  'rare' rows of a fourth
 * label when rare > 0. */
static void write_set(const char *labels_override, int rare)
{
    static const char *const words[3][6] = {
        { "refund", "invoice", "charge", "payment", "card", "billing" },
        { "parcel", "courier", "tracking", "late", "address", "delivery" },
        { "password", "login", "code", "locked", "account", "access" },
    };
    static const char *const names[3] = { "billing", "delivery", "access" };
    static const char *const filler[5] = { "hello", "please", "thanks", "today", "help" };
    struct rng r;
    FILE *fp = open_set("text,label", &r, 42);
    for (int i = 0; i < 90; i++) {
        int k = i % 3;
        for (int w = 0; w < 5; w++) {
            int other = rng_next(&r) % 5 == 0;
            int kk = other ? (int)((unsigned)k + 1 + rng_next(&r) % 2) % 3 : k;
            fprintf(fp, "%s %s ", words[kk][rng_next(&r) % 6], filler[rng_next(&r) % 5]);
        }
        fprintf(fp, ",%s\n", labels_override ? labels_override : names[k]);
    }
    for (int i = 0; i < rare; i++)
        fprintf(fp, "gift wrapping ribbon,extras\n");
    fclose(fp);
}

static void load(struct corpus *c)
{
    static const char *const cols[] = { "text" };
    struct dataset_options o = { cols, 1, "label", NULL, CSV_OPTIONS_INIT };
    struct text_options t = TEXT_OPTIONS_INIT;
    struct err e = ERR_INIT;
    memset(c, 0, sizeof *c);
    cr_assert_eq(corpus_load(c, path, &o, &t, &e), 0, "%s", e.msg);
    unlink(path);
}

static struct pipeline_spec bow_spec(void)
{
    struct pipeline_spec s = PIPELINE_SPEC_INIT;
    s.feat.pool = POOL_BOW;
    return s;
}

/* Cross-validate the bow + logreg pipeline; the run must succeed. */
static void run_cv(const struct corpus *c, const struct cv_params *p, struct cv_result *r)
{
    struct pipeline_spec s = bow_spec();
    struct err e = ERR_INIT;
    cr_assert_eq(cv_run(r, &s, c, NULL, p, &e), 0, "%s", e.msg);
}

Test(cv, folds_partition_and_pooled_rows)
{
    write_set(NULL, 0);
    struct corpus c;
    load(&c);
    struct cv_params p = CV_PARAMS_INIT;
    struct cv_result r = CV_RESULT_INIT;
    run_cv(&c, &p, &r);
    size_t N = c.ds.n, K = c.ds.nlabels;
    cr_assert_eq(r.pooled.n_rows, p.repeats * N);
    for (size_t rep = 0; rep < p.repeats; rep++) {
        const int *f = folds_repeat(&r.f, rep);
        size_t size[5] = { 0 };
        for (size_t i = 0; i < N; i++) {
            cr_assert(f[i] >= 0 && f[i] < 5);
            size[f[i]]++;
            /* predicted = argmax of the stored probabilities, which sum to 1 */
            const double *pr = r.proba + (rep * N + i) * K;
            double sum = 0;
            for (size_t k = 0; k < K; k++) {
                sum += pr[k];
                cr_assert(pr[k] <= pr[r.pred[rep * N + i]]);
            }
            cr_assert(fabs(sum - 1) < 1e-12);
        }
        for (int k = 0; k < 5; k++)
            cr_assert_eq(size[k], N / 5, "repeat %zu fold %d has %zu rows", rep, k, size[k]);
    }
    cr_assert(memcmp(folds_repeat(&r.f, 0), folds_repeat(&r.f, 1), N * sizeof(int)) != 0,
              "repeats must reshuffle");
    cv_release(&r);
    corpus_release(&c);
}

Test(cv, held_out_rows_do_not_inform_their_prediction)
{
    write_set(NULL, 0);
    struct corpus c;
    load(&c);
    struct pipeline_spec s = bow_spec();
    struct cv_params p = CV_PARAMS_INIT;
    p.repeats = 2;
    struct cv_result r = CV_RESULT_INIT;
    run_cv(&c, &p, &r);
    struct err e = ERR_INIT;
    size_t N = c.ds.n, K = c.ds.nlabels;
    size_t *tr = calloc(N, sizeof *tr), *te = calloc(N, sizeof *te);
    double *P = calloc(N * K, sizeof *P);
    for (size_t rep = 0; rep < 2; rep++)
        for (int f = 0; f < p.folds; f++) {
            const int *fo = folds_repeat(&r.f, rep);
            size_t ntr = 0, nte = 0;
            for (size_t i = 0; i < N; i++) {
                if (fo[i] == f)
                    te[nte++] = i;
                else
                    tr[ntr++] = i;
            }
            pipeline *pl = pipeline_fit(&s, &c.docs, c.ds.y, K, tr, ntr, NULL, NULL, &e);
            cr_assert(pl, "%s", e.msg);
            pipeline_proba(pl, &c.docs, te, nte, P, NULL);
            for (size_t q = 0; q < nte; q++)
                cr_assert(memcmp(P + q * K, r.proba + (rep * N + te[q]) * K, K * sizeof *P) == 0,
                          "repeat %zu fold %d row %zu differs from a fit on the training rows alone", rep, f, te[q]);
            pipeline_free(pl);
        }
    free(tr);
    free(te);
    free(P);
    cv_release(&r);
    corpus_release(&c);
}

static void run_threads(int search, int threads, struct cv_result *r, struct corpus *c)
{
    struct cv_params p = CV_PARAMS_INIT;
    p.threads = threads;
    p.search = search;
    p.repeats = search ? 1 : 3;
    p.folds = search ? 3 : 5;
    run_cv(c, &p, r);
}

Test(cv, one_and_two_threads_agree)
{
    write_set(NULL, 0);
    struct corpus c;
    load(&c);
    for (int search = 0; search < 2; search++) {
        struct cv_result a = CV_RESULT_INIT, b = CV_RESULT_INIT;
        run_threads(search, 1, &a, &c);
        run_threads(search, 2, &b, &c);
        size_t N = c.ds.n, K = c.ds.nlabels;
        cr_assert(memcmp(a.proba, b.proba, a.repeats * N * K * sizeof *a.proba) == 0);
        cr_assert(memcmp(a.pred, b.pred, a.repeats * N * sizeof *a.pred) == 0);
        cr_assert(memcmp(a.f.fold, b.f.fold, a.repeats * N * sizeof *a.f.fold) == 0);
        cr_assert(a.pooled.macro_f1 == b.pooled.macro_f1 && a.spread.macro_f1.sd == b.spread.macro_f1.sd);
        if (search)
            cr_assert(memcmp(a.chosen_C, b.chosen_C, 3 * sizeof *a.chosen_C) == 0);
        cv_release(&a);
        cv_release(&b);
    }
    corpus_release(&c);
}

Test(cv, search_picks_from_the_grid)
{
    write_set(NULL, 0);
    struct corpus c;
    load(&c);
    struct cv_result r = CV_RESULT_INIT;
    run_threads(1, 2, &r, &c);
    static const double grid[] = CV_GRID_C;
    cr_assert(r.chosen_C);
    cr_assert_null(r.chosen_gamma, "logreg has no gamma to choose");
    for (size_t t = 0; t < 3; t++) {
        int found = 0;
        for (size_t g = 0; g < sizeof grid / sizeof grid[0]; g++)
            found |= r.chosen_C[t] == grid[g];
        cr_assert(found, "fold %zu chose C = %g, not in the grid", t, r.chosen_C[t]);
    }
    /* cv_search on all rows returns a spec that differs from the input only
     * in C, a grid value. */
    struct pipeline_spec s = bow_spec(), best;
    size_t N = c.ds.n, *rows = calloc(N, sizeof *rows);
    for (size_t i = 0; i < N; i++)
        rows[i] = i;
    struct err e = ERR_INIT;
    cr_assert_eq(cv_search(&s, &c, NULL, rows, N, 3, 9, &best, &e), 0, "%s", e.msg);
    int found = 0;
    for (size_t g = 0; g < sizeof grid / sizeof grid[0]; g++)
        found |= best.C == grid[g];
    cr_assert(found);
    /* field by field: memcmp of the structs would read their padding */
    cr_assert(best.clf == s.clf && best.gamma == s.gamma && best.balanced == s.balanced &&
                  best.max_iter == s.max_iter && best.tol == s.tol && best.seed == s.seed &&
                  best.feat.pool == s.feat.pool && best.feat.sublinear_tf == s.feat.sublinear_tf &&
                  best.feat.sif_a == s.feat.sif_a && best.feat.bigrams == s.feat.bigrams &&
                  best.feat.min_df == s.feat.min_df && best.feat.scale == s.feat.scale,
              "search changed more than C");
    free(rows);
    cv_release(&r);
    corpus_release(&c);
}

Test(cv, refuses_one_label_and_rare_labels)
{
    write_set("billing", 0);
    struct corpus c;
    load(&c);
    struct pipeline_spec s = bow_spec();
    struct cv_params p = CV_PARAMS_INIT;
    struct cv_result r = CV_RESULT_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(cv_run(&r, &s, &c, NULL, &p, &e), -1);
    cr_assert(strstr(e.msg, "only one label"), "%s", e.msg);
    corpus_release(&c);

    write_set(NULL, 3);
    load(&c);
    err_clear(&e);
    cr_assert_eq(cv_run(&r, &s, &c, NULL, &p, &e), -1);
    cr_assert(strstr(e.msg, "'extras' has 3 rows"), "%s", e.msg);
    cr_assert(strstr(e.msg, "vecsift-test-cv"), "the message names the file: %s", e.msg);
    corpus_release(&c);
}

/* Invented noise: random words, random labels, every ticket written twice
 * with the same id.  Nothing can be learned, so an honest inner score is
 * near chance (about 0.5 for two labels); an inner split that puts the two
 * copies on both sides lets the classifier recall the twin and scores near 1.
 * With groups, the nested search's inner folds must keep copies together
 * (common practice: group k-fold at every level of a nested search). */
static void write_twins(void)
{
    struct rng r;
    FILE *fp = open_set("id,text,label", &r, 3);
    for (int i = 0; i < 60; i++) {
        char text[256] = "";
        for (int w = 0; w < 8; w++)
            snprintf(text + strlen(text), sizeof text - strlen(text), "w%u ", (unsigned)(rng_next(&r) % 300));
        const char *lab = rng_next(&r) % 2 ? "a" : "b";
        fprintf(fp, "t%d,%s,%s\nt%d,%s,%s\n", i, text, lab, i, text, lab);
    }
    fclose(fp);
}

Test(cv, nested_search_keeps_groups_together)
{
    write_twins();
    static const char *const cols[] = { "text" };
    struct dataset_options o = { cols, 1, "label", "id", CSV_OPTIONS_INIT };
    struct text_options t = TEXT_OPTIONS_INIT;
    struct err e = ERR_INIT;
    struct corpus c;
    memset(&c, 0, sizeof c);
    cr_assert_eq(corpus_load(&c, path, &o, &t, &e), 0, "%s", e.msg);
    unlink(path);
    int *g = calloc(c.ds.n, sizeof *g);
    for (size_t i = 0; i < c.ds.n; i++)
        g[i] = atoi(c.ds.group[i] + 1);
    struct cv_params p = CV_PARAMS_INIT;
    p.repeats = 1;
    p.search = 1;
    p.group = g;
    p.n_groups = 60;
    struct cv_result r = CV_RESULT_INIT;
    run_cv(&c, &p, &r);
    double grouped = 0, split = 0;
    for (int f = 0; f < p.folds; f++)
        grouped += r.chosen_score[f] / p.folds;
    cr_assert(grouped < 0.65, "mean inner macro F1 %g: copies were split by the inner folds", grouped);
    cv_release(&r);
    /* The detector works: without groups the copies are split and the inner
     * score is far higher (two thirds of the copies have their twin on the
     * training side of a 3-fold inner split). */
    p.group = NULL;
    p.n_groups = 0;
    run_cv(&c, &p, &r);
    for (int f = 0; f < p.folds; f++)
        split += r.chosen_score[f] / p.folds;
    cr_assert(split > grouped + 0.15, "mean inner macro F1 %g without groups, %g with", split, grouped);
    cv_release(&r);
    free(g);
    corpus_release(&c);
}
