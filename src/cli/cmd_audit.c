/* cmd_audit.c -- `vecsift audit`: the labelled rows whose given label looks
 * wrong.
 *
 * Every row is scored by pipelines that never saw it (cross-validation, as
 * in evaluate); with --repeats the out-of-fold probabilities are averaged
 * over the repeats.  Those probabilities go to the confident-learning audit
 * of labelcheck.h (Northcutt, Jiang and Chuang 2021).  The command only
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

struct audit_args {
    struct common_cv cv;
    const char *out;
    long excerpt;
};

#define A struct audit_args
static const struct cli_opt opts[] = {
    CLI_OPT_STR("output", 'o', "<file>", "where to write the suspect rows as CSV (default: - for stdout)", A, out),
    CLI_OPT_LONG("excerpt", 0, "<n>", "bytes of text kept in the excerpt column (default: 160)", A, excerpt, 8, 100000),
    COMMON_FIT_OPTIONS(A, cv.fa),
    COMMON_OPT_FOLDS(A, cv.cp),
    COMMON_OPT_REPEATS("repeats with fresh shuffles; probabilities are averaged (default: 1)", A, cv.cp),
    COMMON_OPT_GROUP_COL(A, cv.da),
    COMMON_CV_LAST_OPTIONS(A, cv)
};
#undef A

const struct cli_cmd cmd_audit_info = {
    "audit", "[options] DATA.csv [-o SUSPECTS.csv]",
    "list the labelled rows whose label looks wrong, most suspect first",
    opts,
    "Each row is scored out of fold: by pipelines fitted without it.  A row is\n"
    "a suspect when another label is confidently more likely than its own\n"
    "(confident learning: Northcutt, Jiang and Chuang 2021).  Output columns:\n"
    "row (1-based data row), given, suggested, score (probability of the\n"
    "suggested label minus that of the given one), excerpt, p_given,\n"
    "p_suggested.  A suspect is a row to look at, not a proven mistake: some\n"
    "are texts that really belong to two queues.  A summary goes to stderr."
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

static int write_suspects(const char *out, const struct labelcheck_result *lr, const struct corpus *c,
                          const double *P, size_t excerpt, struct err *e)
{
    ofile *o = ofile_open(out, e);
    if (!o)
        return -1;
    FILE *fp = ofile_fp(o);
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
    return ofile_commit(o, e);
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
    common_keep_freed_memory();
    common_cv_init(&a.cv, 1);
    a.out = "-";
    a.excerpt = 160;
    const char *data = NULL;
    int rc = cli_parse_exact(&cmd_audit_info, argc, argv, &a, 1, &data, "audit takes one data file");
    if (rc != CLI_END)
        return rc;
    rc = ERR_OK;
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
    const char *ins[] = { data, fa->vectors };
    if (ofile_check_distinct(a.out, ins, 2, &e) < 0)
        goto fail;
    if (common_load_labelled(&c, data, &a.cv.da, &e) < 0)
        goto fail;
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
    if (labelcheck_run(P, c.ds.y, c.ds.n, (int)c.ds.nlabels, &lr, &e) < 0)
        goto fail;
    if (write_suspects(a.out, &lr, &c, P, (size_t)a.excerpt, &e) < 0)
        goto fail;
    summary(&lr, &c, (size_t)cp->folds, cp->repeats);
    goto done;
fail:
    rc = cli_fail(&e);
done:
    free(P);
    free(groups);
    labelcheck_release(&lr);
    cv_release(&r);
    vecset_close(vs);
    corpus_release(&c);
    return rc;
}
