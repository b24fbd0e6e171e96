/* cmd_audit.c -- `vecsift audit`: the labelled rows whose given label looks
 * wrong.
 *
 * Every row is scored by pipelines that never saw it (cross-validation, as
 * in evaluate); with --repeats the out-of-fold probabilities are averaged
 * over the repeats (the folds module's repeated stratified k-fold).  Those
 * probabilities go to the confident-learning audit of labelcheck.h
 * (Northcutt, Jiang and Chuang 2021): prune by noise rate, ranked by
 * self-confidence, unless --select / --rank say otherwise.  The command only
 * points at rows; it never changes the data.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "commands.h"
#include "common.h"
#include "excerpt.h"
#include "vecsift/cv.h"
#include "vecsift/err.h"
#include "vecsift/labelcheck.h"
#include "vecsift/ofile.h"
#include "vecsift/vecset.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"

/* No --pool given (not a pooling: set before parsing, replaced after). */
#define POOL_UNSET ((enum features_pool)-1)

struct audit_args {
    struct common_cv cv;
    const char *out, *proba_out;
    long excerpt;
    struct labelcheck_opts lo;
};

static cli_take_fn take_select, take_rank;

#define A struct audit_args
static const struct cli_opt opts[] = {
    CLI_OPT_STR("output", 'o', "<file>", "where to write the suspect rows as CSV (default: - for stdout)", A, out),
    CLI_OPT_LONG("excerpt", 0, "<n>", "bytes of text kept in the excerpt column (default: 160)", A, excerpt, 8, 100000),
    CLI_OPT_FN("select", 0, "<how>", "noise-rate: as many rows as the estimated noise | off-diagonal: of the confident joint (default: noise-rate)",
               A, lo, struct labelcheck_opts, take_select),
    CLI_OPT_FN("rank", 0, "<how>", "confidence: 1 - p(given) | margin: p(best other) - p(given) (default: confidence)", A,
               lo, struct labelcheck_opts, take_rank),
    CLI_OPT_STR("probabilities", 0, "<file>",
                "also write every row's out-of-fold probabilities (mean over repeats) as CSV", A, proba_out),
    COMMON_FIT_OPTIONS(A, cv.fa),
    COMMON_OPT_FOLDS(A, cv.cp),
    COMMON_OPT_REPEATS("repeats with fresh shuffles; probabilities are averaged (default: 1)", A, cv.cp),
    COMMON_OPT_GROUP_COL(A, cv.da),
    COMMON_CV_LAST_OPTIONS(A, cv)
};
#undef A

static int take_select(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst)
{
    (void)o;
    struct labelcheck_opts *lo = dst;
    if (strcmp(val, "noise-rate") == 0)
        lo->select = LABELCHECK_NOISE_RATE;
    else if (strcmp(val, "off-diagonal") == 0)
        lo->select = LABELCHECK_OFF_DIAGONAL;
    else {
        cli_usage(cmd, "option '--select' takes noise-rate or off-diagonal, not '%s'", val);
        return -1;
    }
    return 0;
}

static int take_rank(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst)
{
    (void)o;
    struct labelcheck_opts *lo = dst;
    if (strcmp(val, "margin") == 0)
        lo->rank = LABELCHECK_BY_MARGIN;
    else if (strcmp(val, "confidence") == 0)
        lo->rank = LABELCHECK_BY_CONFIDENCE;
    else {
        cli_usage(cmd, "option '--rank' takes margin or confidence, not '%s'", val);
        return -1;
    }
    return 0;
}

const struct cli_cmd cmd_audit_info = {
    "audit", "[options] DATA.csv [-o SUSPECTS.csv]",
    "list the labelled rows whose label looks wrong, most suspect first",
    opts,
    "Each row is scored out of fold: by pipelines fitted without it.  Then\n"
    "confident learning (Northcutt, Jiang and Chuang 2021): each label's\n"
    "threshold is the mean probability of that label over the rows carrying it,\n"
    "the confident joint counts which label each row confidently belongs to,\n"
    "and as many rows as it estimates to be mislabelled become suspects\n"
    "(--select noise-rate), most suspect first by --rank.  Output columns:\n"
    "row (1-based data row), given, suggested, score (the --rank key: 1 minus\n"
    "the probability of the given label, or the probability of the most likely\n"
    "other label minus that of the given one), excerpt, p_given, p_suggested.\n"
    "Without --pool, audit scores with the route that found the most planted\n"
    "wrong labels on open data (docs/benchmarks.md, label audit): bow+tfidf\n"
    "with --vectors, bow without; vectors learned from your unlabelled text\n"
    "usually find more wrong labels than bow alone.  A suspect is a row to look at, not a proven\n"
    "mistake: some are texts that really belong to two queues.  A summary goes\n"
    "to stderr."
};

/* Mean over the R repeats of the (R, N, K) out-of-fold probabilities. */
static double *mean_proba(const struct cv_result *r)
{
    size_t NK = xmul(r->n, r->k);
    double *P = xcalloc(NK ? NK : 1, sizeof *P);
    for (size_t q = 0; q < r->repeats; q++)
        for (size_t i = 0; i < NK; i++)
            P[i] += r->proba[q * NK + i];
    for (size_t i = 0; i < NK; i++)
        P[i] /= (double)r->repeats;
    return P;
}

static void cell(FILE *fp, const char *s)
{
    fputc(',', fp);
    csv_put(fp, s, strlen(s), 1);
}

static void write_suspects(FILE *fp, const struct labelcheck_result *lr, const struct corpus *c,
                           const double *P, size_t excerpt)
{
    size_t K = c->ds.nlabels;
    fputs("row,given,suggested,score,excerpt,p_given,p_suggested\r\n", fp);
    for (size_t s = 0; s < lr->n_suspects; s++) {
        const struct labelcheck_suspect *x = &lr->suspect[s];
        fprintf(fp, "%zu", x->row + 1);
        cell(fp, c->ds.labels[x->given]);
        cell(fp, c->ds.labels[x->suggested]);
        fprintf(fp, ",%.4f", x->score);
        char *ex = excerpt_new(c->ds.text[x->row], excerpt);
        cell(fp, ex);
        free(ex);
        fprintf(fp, ",%.4f,%.4f\r\n", P[x->row * K + (size_t)x->given], P[x->row * K + (size_t)x->suggested]);
    }
}

/* Every row's mean out-of-fold probabilities, full precision (%.17g reads
 * back exactly): row, label, prob:LABEL... */
static void write_proba(FILE *fp, const struct corpus *c, const double *P)
{
    size_t K = c->ds.nlabels;
    fputs("row,label", fp);
    for (size_t k = 0; k < K; k++) {
        size_t len = strlen(c->ds.labels[k]) + 6;
        char *h = xmalloc(len);
        snprintf(h, len, "prob:%s", c->ds.labels[k]);
        cell(fp, h);
        free(h);
    }
    fputs("\r\n", fp);
    for (size_t i = 0; i < c->ds.n; i++) {
        fprintf(fp, "%zu", i + 1);
        cell(fp, c->ds.labels[c->ds.y[i]]);
        for (size_t k = 0; k < K; k++)
            fprintf(fp, ",%.17g", P[i * K + k]);
        fputs("\r\n", fp);
    }
}

/* Suspects per given label, and the most common given -> suggested pair. */
static void summary(const struct labelcheck_result *lr, const struct corpus *c, size_t folds, size_t repeats)
{
    size_t K = c->ds.nlabels, N = c->ds.n;
    size_t *per = xcalloc(K, sizeof *per), *rows = xcalloc(K, sizeof *rows);
    for (size_t i = 0; i < N; i++)
        rows[c->ds.y[i]]++;
    for (size_t s = 0; s < lr->n_suspects; s++)
        per[lr->suspect[s].given]++;
    cli_note("%zu of %zu rows (%.1f%%) have a label that looks wrong (%zu folds x %zu repeat%s, out of fold)",
             lr->n_suspects, N, N ? 100.0 * (double)lr->n_suspects / (double)N : 0.0, folds, repeats,
             repeats == 1 ? "" : "s");
    cli_note("%-20s %6s %8s  %s", "given label", "rows", "suspect", "most often suggested instead");
    for (size_t k = 0; k < K; k++) {
        size_t best = K, bestn = 0;
        for (size_t j = 0; j < K; j++)
            if (j != k && lr->joint[k * K + j] > bestn)
                bestn = lr->joint[k * K + j], best = j;
        char more[128] = "";
        if (best < K)
            snprintf(more, sizeof more, "%.80s (%zu)", c->ds.labels[best], bestn);
        cli_note("%-20.20s %6zu %8zu  %s", c->ds.labels[k], rows[k], per[k], more);
    }
    cli_note("a suspect is a row to check by hand, not a proven mistake: some texts fit two labels");
    free(per);
    free(rows);
}

int cmd_audit(int argc, char **argv)
{
    struct audit_args a;
    memset(&a, 0, sizeof a);
    common_keep_freed_memory();
    common_cv_init(&a.cv, 1);
    a.cv.fa.spec.feat.pool = POOL_UNSET; /* audit's own default, below */
    a.out = "-";
    a.excerpt = 160;
    struct labelcheck_opts lo0 = LABELCHECK_OPTS_INIT;
    a.lo = lo0;
    const char *data = NULL;
    int rc = cli_parse_exact(&cmd_audit_info, argc, argv, &a, 1, &data, "audit takes one data file");
    if (rc != CLI_END)
        return rc;
    if (a.cv.fa.spec.feat.pool == POOL_UNSET)
        a.cv.fa.spec.feat.pool = a.cv.fa.vectors ? POOL_BOW_TFIDF : POOL_BOW;
    rc = ERR_OK;
    if (a.proba_out && strcmp(a.proba_out, "-") == 0 && strcmp(a.out, "-") == 0)
        return cli_usage(&cmd_audit_info, "the suspects and --probabilities cannot both go to stdout");
    common_cv_ready(&a.cv);
    struct common_fit *fa = &a.cv.fa;
    struct cv_params *cp = &a.cv.cp;

    struct err e = ERR_INIT;
    struct corpus c;
    memset(&c, 0, sizeof c);
    struct vecset *vs = NULL;
    struct cv_result r = CV_RESULT_INIT;
    struct labelcheck_result lr = LABELCHECK_RESULT_INIT;
    double *P = NULL;
    int *groups = NULL;
    ofile *o_sus = NULL, *o_proba = NULL;
    const char *ins[] = { data, fa->vectors, a.out };
    if (ofile_check_distinct(a.out, ins, 2, &e) < 0)
        goto fail;
    if (a.proba_out && ofile_check_distinct(a.proba_out, ins, 3, &e) < 0)
        goto fail;
    if (common_load_labelled(&c, data, &a.cv.da, &e) < 0)
        goto fail;
    cli_warn_too_long(data, c.too_long_line, c.too_long);
    if (c.ds.nlabels < 2) {
        err_set(&e, data, 0, "an audit needs at least 2 labels, the data has %zu", c.ds.nlabels);
        goto fail;
    }
    if (common_open_vectors(fa, &vs, &e) < 0)
        goto fail;
    groups = common_cv_groups(cp, &c);
    if (cv_run(&r, &fa->spec, &c, vs, cp, &e) < 0)
        goto fail;
    if (r.unconverged)
        cli_warn("%d of %zu fits stopped at the iteration cap; raise --max-iter or lower --C", r.unconverged,
                 r.repeats * (size_t)r.folds);
    P = mean_proba(&r);
    if (labelcheck_run(P, c.ds.y, c.ds.n, (int)c.ds.nlabels, &a.lo, &lr, &e) < 0)
        goto fail;
    /* Both outputs are written whole before either is renamed into place. */
    if (!(o_sus = ofile_open(a.out, &e)))
        goto fail;
    if (a.proba_out && !(o_proba = ofile_open(a.proba_out, &e)))
        goto fail;
    write_suspects(ofile_fp(o_sus), &lr, &c, P, (size_t)a.excerpt);
    if (o_proba) {
        write_proba(ofile_fp(o_proba), &c, P);
        rc = ofile_commit(o_proba, &e);
        o_proba = NULL;
        if (rc < 0)
            goto fail;
    }
    rc = ofile_commit(o_sus, &e);
    o_sus = NULL;
    if (rc < 0)
        goto fail;
    summary(&lr, &c, (size_t)cp->folds, cp->repeats);
    goto done;
fail:
    rc = cli_fail(&e);
done:
    ofile_abort(o_proba);
    ofile_abort(o_sus);
    free(P);
    free(groups);
    labelcheck_release(&lr);
    cv_release(&r);
    vecset_close(vs);
    corpus_release(&c);
    return rc;
}
