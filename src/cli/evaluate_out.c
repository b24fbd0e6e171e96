/* evaluate_out.c -- evaluate's outputs (see evaluate_out.h). */
#include "evaluate_out.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/csv.h"
#include "vecsift/err.h"
#include "vecsift/jsonv.h"
#include "vecsift/metrics.h"
#include "vecsift/ofile.h"
#include "vecsift/xalloc.h"

void evaluate_describe(const struct common_fit *fa, char *buf, size_t n)
{
    const struct pipeline_spec *s = &fa->spec;
    if (s->feat.pool == POOL_BOW)
        snprintf(buf, n, "%s on a tf-idf bag of words", pipeline_classifier_name(s->clf));
    else if (features_pool_combined(s->feat.pool))
        snprintf(buf, n, "%s on a tf-idf bag of words beside %s-pooled vectors (%s)", pipeline_classifier_name(s->clf),
                 features_pool_name(features_pool_dense(s->feat.pool)), fa->vectors ? fa->vectors : "?");
    else
        snprintf(buf, n, "%s on %s-pooled vectors (%s)", pipeline_classifier_name(s->clf),
                 features_pool_name(s->feat.pool), fa->vectors ? fa->vectors : "?");
}

void evaluate_cut(const struct cv_result *r, double target, struct evaluate_advice *out)
{
    size_t n = 0;
    struct metrics_cutoff *c = metrics_cutoffs(r->all, &n);
    long i = c ? metrics_cutoff_for_precision(c, n, target) : -1;
    memset(out, 0, sizeof *out);
    if (i >= 0) {
        out->reachable = 1;
        out->threshold = c[i].threshold;
        out->precision = c[i].precision;
        out->coverage = c[i].coverage;
        /* A rounded cut-off printed as "%.3f" could fall below the threshold
         * and admit rows the out-of-fold precision never counted.  Use the
         * shortest decimal in (next lower confidence, threshold]: predict
         * (route when confidence >= p) then keeps exactly the same rows. */
        double t = c[i].threshold, below = (size_t)i + 1 < n ? c[i + 1].threshold : -1.0;
        jsonv_format_double(t, out->advice, sizeof out->advice);
        for (int d = 1; d <= 16; d++) {
            char buf[40];
            double scale = pow(10.0, d);
            snprintf(buf, sizeof buf, "%.*f", d, floor(t * scale) / scale);
            double v = strtod(buf, NULL);
            if (v <= t && v > below) {
                snprintf(out->advice, sizeof out->advice, "%s", buf);
                break;
            }
        }
    }
    free(c);
}

/* ---- before fitting ---- */

void evaluate_label_table(FILE *fp, const struct corpus *c, int folds)
{
    size_t K = c->ds.nlabels;
    size_t *cnt = xcalloc(K ? K : 1, sizeof *cnt);
    for (size_t i = 0; i < c->ds.n; i++)
        cnt[c->ds.y[i]]++;
    size_t w = 5;
    for (size_t k = 0; k < K; k++)
        if (strlen(c->ds.labels[k]) > w)
            w = strlen(c->ds.labels[k]);
    fprintf(fp, "%zu labelled rows in %s\n", c->ds.n, c->ds.path);
    fprintf(fp, "  %-*s  %6s  %6s\n", (int)w, "label", "rows", "share");
    for (size_t k = 0; k < K; k++)
        fprintf(fp, "  %-*s  %6zu  %5.1f%%%s\n", (int)w, c->ds.labels[k], cnt[k],
                100.0 * (double)cnt[k] / (double)c->ds.n, cnt[k] < (size_t)folds ? "  < folds" : "");
    fprintf(fp, "Rare labels: every label needs at least as many rows as there are folds (%d); "
                "otherwise lower --folds or merge the label into a related one.\n",
            folds);
    free(cnt);
}

/* ---- terminal ---- */

static void pm(char *buf, size_t n, double mean, double sd)
{
    if (isnan(sd))
        snprintf(buf, n, "%.3f", mean);
    else
        snprintf(buf, n, "%.3f ± %.3f", mean, sd);
}

struct order {
    size_t k;
    double f1;
};

static int worst_first(const void *a, const void *b)
{
    const struct order *x = a, *y = b;
    if (x->f1 != y->f1)
        return x->f1 < y->f1 ? -1 : 1;
    return x->k < y->k ? -1 : 1;
}

void evaluate_terminal(FILE *fp, const struct cv_result *r, const struct corpus *c, const struct evaluate_setup *s)
{
    size_t K = r->k, T = r->repeats * (size_t)r->folds;
    char what[512];
    evaluate_describe(s->fa, what, sizeof what);
    fprintf(fp, "\nCross-validated %s\n%zu rows, %zu labels, %d folds x %zu repeats (seed %llu), "
                "about %zu training rows per fit\n\n",
            what, r->n, K, r->folds, r->repeats, (unsigned long long)s->cp->seed, r->train_rows);
    size_t w = 5;
    for (size_t k = 0; k < K; k++)
        if (strlen(c->ds.labels[k]) > w)
            w = strlen(c->ds.labels[k]);
    fprintf(fp, "%-*s  %5s  %-15s  %-15s  %-15s  %s\n", (int)w, "label", "rows", "precision", "recall", "F1",
            "most often taken for");
    struct order *o = xcalloc(K, sizeof *o);
    for (size_t k = 0; k < K; k++) {
        o[k].k = k;
        o[k].f1 = r->pooled.label[k].f1;
    }
    qsort(o, K, sizeof *o, worst_first);
    for (size_t q = 0; q < K; q++) {
        size_t k = o[q].k;
        const struct metrics_label *L = &r->pooled.label[k];
        char pbuf[40], rbuf[40], fbuf[40], mis[256] = "-";
        pm(pbuf, sizeof pbuf, L->precision, r->spread.precision[k].sd);
        pm(rbuf, sizeof rbuf, L->recall, r->spread.recall[k].sd);
        pm(fbuf, sizeof fbuf, L->f1, r->spread.f1[k].sd);
        if (L->mistaken_for >= 0)
            snprintf(mis, sizeof mis, "%s (%.0f%% of its rows)", c->ds.labels[L->mistaken_for],
                     100.0 * (double)L->mistaken_count / (double)L->support);
        /* support is counted over every repeat: show rows of the data */
        fprintf(fp, "%-*s  %5zu  %-16s %-16s %-16s %s\n", (int)w, c->ds.labels[k], L->support / r->repeats, pbuf,
                rbuf, fbuf, mis);
    }
    free(o);
    char a[40], mf[40], wf[40], ll[40], br[40];
    pm(a, sizeof a, r->pooled.accuracy, r->spread.accuracy.sd);
    pm(mf, sizeof mf, r->pooled.macro_f1, r->spread.macro_f1.sd);
    pm(wf, sizeof wf, r->pooled.weighted_f1, r->spread.weighted_f1.sd);
    pm(ll, sizeof ll, r->pooled.log_loss, r->spread.log_loss.sd);
    pm(br, sizeof br, r->pooled.brier, r->spread.brier.sd);
    fprintf(fp, "\naccuracy %s   macro F1 %s   weighted F1 %s\nlog loss %s   Brier %s\n", a, mf, wf, ll, br);
    fprintf(fp, "\nFigures are pooled over all out-of-fold predictions; ± is the standard deviation over the %zu "
                "folds.\n%s.\n",
            T, METRICS_ZERO_DIVISION_RULE);
    if (r->held_out.tokens)
        fprintf(fp, "Held-out tokens %s: %.1f%%.\n",
                s->fa->spec.feat.pool == POOL_BOW ? "seen in training" : "with a vector",
                100.0 * (double)r->held_out.with_vector / (double)r->held_out.tokens);
    if (r->chosen_C) {
        fprintf(fp, "Parameter search chose C =");
        for (size_t t = 0; t < T; t++)
            fprintf(fp, " %g", r->chosen_C[t]);
        fprintf(fp, " (one per fold)\n");
        if (r->chosen_gamma) {
            fprintf(fp, "and gamma =");
            for (size_t t = 0; t < T; t++)
                fprintf(fp, " %g", r->chosen_gamma[t]);
            fprintf(fp, " x the default (one per fold)\n");
        }
    }
    struct evaluate_advice cut;
    evaluate_cut(r, s->target, &cut);
    if (cut.reachable)
        fprintf(fp, "\nCut-off: route automatically when confidence >= %s. Out of fold this kept %.1f%% of rows "
                    "at precision %.3f (target %.2f); the other %.1f%% go to a person.\n"
                    "Use it with: vecsift predict --review-below %s\n",
                cut.advice, 100 * cut.coverage, cut.precision, s->target, 100 * (1 - cut.coverage), cut.advice);
    else
        fprintf(fp, "\nCut-off: no confidence cut-off reaches precision %.2f on these rows; every ticket needs a "
                    "person, or more labelled examples.\n",
                s->target);
    fprintf(fp, "These figures describe rows like these; precision per queue can drift once real traffic flows: "
                "keep a person on the review route and check it over time.\n");
}

/* ---- JSON ---- */

static cJSON *spread_obj(struct metrics_spread s)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddItemToObject(o, "mean", isnan(s.mean) ? cJSON_CreateNull() : jsonv_number_new(s.mean));
    cJSON_AddItemToObject(o, "sd", isnan(s.sd) ? cJSON_CreateNull() : jsonv_number_new(s.sd));
    return o;
}

static cJSON *num(double x)
{
    return isfinite(x) ? jsonv_number_new(x) : cJSON_CreateNull();
}

cJSON *evaluate_json(const struct cv_result *r, const struct corpus *c, const struct evaluate_setup *s)
{
    size_t K = r->k;
    cJSON *root = cJSON_CreateObject();
    cJSON *labs = cJSON_AddArrayToObject(root, "labels");
    for (size_t k = 0; k < K; k++)
        cJSON_AddItemToArray(labs, cJSON_CreateString(c->ds.labels[k]));
    cJSON *conf = cJSON_AddArrayToObject(root, "confusion");
    for (size_t g = 0; g < K; g++) {
        cJSON *row = cJSON_CreateArray();
        for (size_t p = 0; p < K; p++)
            cJSON_AddItemToArray(row, cJSON_CreateNumber((double)r->pooled.conf[g * K + p]));
        cJSON_AddItemToArray(conf, row);
    }
    cJSON *pooled = cJSON_AddObjectToObject(root, "pooled");
    cJSON_AddItemToObject(pooled, "accuracy", num(r->pooled.accuracy));
    cJSON_AddItemToObject(pooled, "macro_f1", num(r->pooled.macro_f1));
    cJSON_AddItemToObject(pooled, "weighted_f1", num(r->pooled.weighted_f1));
    cJSON_AddItemToObject(pooled, "log_loss", num(r->pooled.log_loss));
    cJSON_AddItemToObject(pooled, "brier", num(r->pooled.brier));
    cJSON *pl = cJSON_AddObjectToObject(pooled, "per_label");
    for (size_t k = 0; k < K; k++) {
        const struct metrics_label *L = &r->pooled.label[k];
        cJSON *o = cJSON_AddObjectToObject(pl, c->ds.labels[k]);
        cJSON_AddItemToObject(o, "precision", num(L->precision));
        cJSON_AddItemToObject(o, "recall", num(L->recall));
        cJSON_AddItemToObject(o, "f1", num(L->f1));
        cJSON_AddNumberToObject(o, "support", (double)L->support);
        if (L->mistaken_for >= 0) {
            cJSON_AddStringToObject(o, "most_mistaken_for", c->ds.labels[L->mistaken_for]);
            cJSON_AddNumberToObject(o, "mistaken_count", (double)L->mistaken_count);
        } else {
            cJSON_AddNullToObject(o, "most_mistaken_for");
        }
    }
    cJSON_AddStringToObject(pooled, "zero_division", METRICS_ZERO_DIVISION_RULE);

    cJSON *pf = cJSON_AddObjectToObject(root, "per_fold");
    cJSON_AddNumberToObject(pf, "folds", (double)(r->repeats * (size_t)r->folds));
    cJSON_AddItemToObject(pf, "accuracy", spread_obj(r->spread.accuracy));
    cJSON_AddItemToObject(pf, "macro_f1", spread_obj(r->spread.macro_f1));
    cJSON_AddItemToObject(pf, "weighted_f1", spread_obj(r->spread.weighted_f1));
    cJSON_AddItemToObject(pf, "log_loss", spread_obj(r->spread.log_loss));
    cJSON_AddItemToObject(pf, "brier", spread_obj(r->spread.brier));
    cJSON *pfl = cJSON_AddObjectToObject(pf, "per_label");
    for (size_t k = 0; k < K; k++) {
        cJSON *o = cJSON_AddObjectToObject(pfl, c->ds.labels[k]);
        cJSON_AddItemToObject(o, "precision", spread_obj(r->spread.precision[k]));
        cJSON_AddItemToObject(o, "recall", spread_obj(r->spread.recall[k]));
        cJSON_AddItemToObject(o, "f1", spread_obj(r->spread.f1[k]));
    }

    cJSON *th = cJSON_AddObjectToObject(root, "threshold");
    struct evaluate_advice cut;
    evaluate_cut(r, s->target, &cut);
    cJSON_AddItemToObject(th, "target_precision", jsonv_number_new(s->target));
    if (cut.reachable) {
        cJSON_AddItemToObject(th, "cutoff", jsonv_number_new(cut.threshold));
        cJSON_AddItemToObject(th, "precision", jsonv_number_new(cut.precision));
        cJSON_AddItemToObject(th, "coverage", jsonv_number_new(cut.coverage));
        cJSON_AddItemToObject(th, "review_below", cJSON_CreateRaw(cut.advice));
    } else {
        cJSON_AddNullToObject(th, "cutoff");
    }
    size_t n = 0;
    struct metrics_cutoff *cc = metrics_cutoffs(r->all, &n);
    cJSON *curve = cJSON_AddArrayToObject(th, "curve");
    for (size_t i = 0; i < n; i++) {
        cJSON *pt = cJSON_CreateObject();
        cJSON_AddItemToObject(pt, "cutoff", jsonv_number_new(cc[i].threshold));
        cJSON_AddItemToObject(pt, "precision", jsonv_number_new(cc[i].precision));
        cJSON_AddItemToObject(pt, "coverage", jsonv_number_new(cc[i].coverage));
        cJSON_AddItemToArray(curve, pt);
    }
    free(cc);

    cJSON *st = cJSON_AddObjectToObject(root, "settings");
    cJSON_AddStringToObject(st, "data", s->data);
    cJSON *tc = cJSON_AddArrayToObject(st, "text_columns");
    struct dataset_options dopt;
    common_data_options(s->da, 1, &dopt);
    for (size_t t = 0; t < dopt.ntext; t++)
        cJSON_AddItemToArray(tc, cJSON_CreateString(dopt.text_cols[t]));
    cJSON_AddStringToObject(st, "label_column", dopt.label_col);
    if (s->da->group_col)
        cJSON_AddStringToObject(st, "group_column", s->da->group_col);
    else
        cJSON_AddNullToObject(st, "group_column");
    const struct pipeline_spec *sp = &s->fa->spec;
    if (s->fa->vectors && sp->feat.pool != POOL_BOW)
        cJSON_AddStringToObject(st, "vectors", s->fa->vectors);
    else
        cJSON_AddNullToObject(st, "vectors");
    cJSON_AddStringToObject(st, "pool", features_pool_name(sp->feat.pool));
    cJSON_AddBoolToObject(st, "sublinear_tf", sp->feat.sublinear_tf);
    cJSON_AddStringToObject(st, "classifier", pipeline_classifier_name(sp->clf));
    cJSON_AddItemToObject(st, "C", jsonv_number_new(pipeline_spec_C(sp)));
    if (sp->clf == CLF_SVM_RBF)
        cJSON_AddItemToObject(st, "gamma", sp->gamma > 0 ? jsonv_number_new(sp->gamma) : cJSON_CreateString("default"));
    cJSON_AddStringToObject(st, "class_weight", sp->balanced ? "balanced" : "none");
    if (sp->clf == CLF_LOGREG)
        cJSON_AddNumberToObject(st, "max_iter", sp->max_iter);
    cJSON_AddNumberToObject(st, "folds", s->cp->folds);
    cJSON_AddNumberToObject(st, "repeats", (double)s->cp->repeats);
    cJSON_AddNumberToObject(st, "seed", (double)s->cp->seed);
    cJSON_AddBoolToObject(st, "search", s->cp->search);
    if (s->cp->search)
        cJSON_AddNumberToObject(st, "inner_folds", s->cp->inner_folds);
    static const char *const enc[] = { "utf-8", "windows-1252", "latin-1" };
    cJSON_AddStringToObject(st, "encoding", enc[s->da->csv.encoding]);
    cJSON_AddBoolToObject(st, "replace_invalid", s->da->csv.replace_invalid);
    cJSON_AddBoolToObject(st, "keep_accents", s->da->text.keep_accents);
    cJSON_AddBoolToObject(st, "mask_email", s->da->text.mask_email);
    cJSON_AddBoolToObject(st, "mask_number", s->da->text.mask_number);
    cJSON_AddStringToObject(st, "version", VECSIFT_VERSION);
    if (r->chosen_C) {
        size_t T = r->repeats * (size_t)r->folds;
        cJSON_AddItemToObject(root, "chosen_C", jsonv_doubles_new(r->chosen_C, T));
        cJSON_AddItemToObject(root, "chosen_inner_macro_f1", jsonv_doubles_new(r->chosen_score, T));
        if (r->chosen_gamma)
            cJSON_AddItemToObject(root, "chosen_gamma_factor", jsonv_doubles_new(r->chosen_gamma, T));
    }
    return root;
}

int evaluate_write_json(const char *path, const cJSON *obj, struct err *e)
{
    ofile *o = ofile_open(path, e);
    if (!o)
        return -1;
    char *text = cJSON_Print(obj);
    fputs(text, ofile_fp(o));
    fputc('\n', ofile_fp(o));
    cJSON_free(text);
    return ofile_commit(o, e);
}

int evaluate_predictions(const char *path, const struct cv_result *r, const struct corpus *c, struct err *e)
{
    ofile *o = ofile_open(path, e);
    if (!o)
        return -1;
    FILE *fp = ofile_fp(o);
    size_t K = r->k, N = r->n;
    fputs("row,repeat,fold,label,predicted,confidence", fp);
    for (size_t k = 0; k < K; k++) {
        char h[512];
        snprintf(h, sizeof h, "prob:%s", c->ds.labels[k]);
        fputc(',', fp);
        csv_put(fp, h, strlen(h), 1);
    }
    fputs("\r\n", fp);
    char buf[40];
    for (size_t rep = 0; rep < r->repeats; rep++) {
        const int *fold = folds_repeat(&r->f, rep);
        for (size_t i = 0; i < N; i++) {
            const double *p = r->proba + (rep * N + i) * K;
            int pred = r->pred[rep * N + i];
            fprintf(fp, "%zu,%zu,%d,", i + 1, rep + 1, fold[i] + 1);
            csv_put(fp, c->ds.labels[c->ds.y[i]], strlen(c->ds.labels[c->ds.y[i]]), 1);
            fputc(',', fp);
            csv_put(fp, c->ds.labels[pred], strlen(c->ds.labels[pred]), 1);
            jsonv_format_double(p[pred], buf, sizeof buf);
            fprintf(fp, ",%s", buf);
            for (size_t k = 0; k < K; k++) {
                jsonv_format_double(p[k], buf, sizeof buf);
                fprintf(fp, ",%s", buf);
            }
            fputs("\r\n", fp);
        }
    }
    return ofile_commit(o, e);
}
