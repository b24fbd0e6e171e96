/* cmd_predict.c -- `vecsift predict`: route the rows of a CSV with a model.
 *
 * Streams: rows are read in batches; while the threads score one batch
 * (predict_run.c), the main thread writes the previous one, in input order,
 * and reads the next.  Every row's output depends on that row and the model
 * alone, so the output is identical for any --threads and for any split of
 * the input into parts.
 */
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "commands.h"
#include "common.h"
#include "vecsift/csv.h"
#include "vecsift/dataset.h"
#include "vecsift/err.h"
#include "vecsift/fmat.h"
#include "vecsift/model.h"
#include "vecsift/ofile.h"
#include "vecsift/pipeline.h"
#include "vecsift/vecset.h"
#include "vecsift/xalloc.h"
#include "predict_run.h"

static const struct cli_opt opts[] = {
    { "output", 'o', "<file>", "where to write the routed rows (default: - for stdout)" },
    { "review-below", 'r', "<p>", "send rows whose confidence is below p to 'review'\n"
      "                              (default: the model's stored cut-off, else 0)" },
    { "top", 'k', "<n>", "also write the n most likely labels and their probabilities" },
    { "explain", 'x', "<n>", "add the n words that pushed each row most toward its label\n"
      "                              (logreg models only)" },
    { "vectors", 'v', "<file>", "the model's vector set, when it moved (fingerprint must match)" },
    { "text-col", 0, "<name>", "text column(s) to read (default: the model's)" },
    { "encoding", 0, "<name>", "utf-8 | windows-1252 | latin-1 (default: utf-8)" },
    { "replace-invalid", 0, NULL, "replace invalid UTF-8 by U+FFFD instead of stopping" },
    RUN_OPTIONS,
    { NULL, 0, NULL, NULL }
};

const struct cli_cmd cmd_predict_info = {
    "predict", "[options] MODEL.json IN.csv [-o OUT.csv]",
    "route the rows of a CSV file: add predicted, confidence and route columns",
    opts,
    "Output: every input column, then 'predicted' (the most probable label),\n"
    "'confidence' (its probability) and 'route' (the label, or 'review' when the\n"
    "confidence is below the cut-off or the text is empty).  Rows keep their order.\n"
    "A classifier misroutes some tickets: keep a person on the 'review' route and\n"
    "watch each queue's precision over time.  Input and output may be '-'."
};

static void cell(FILE *fp, const char *s, int first)
{
    if (!first)
        fputc(',', fp);
    csv_put(fp, s, strlen(s), 1);
}

static void write_batch(FILE *fp, const struct job *j, const struct batch *bt, size_t *routed, size_t *review)
{
    size_t K = j->m->k;
    char num[32];
    for (size_t r = 0; r < bt->n; r++) {
        for (size_t c = 0; c < j->ncols; c++)
            cell(fp, bt->cells[r * j->ncols + c], c == 0);
        const double *pr = bt->prob + r * K;
        int best = bt->label[r];
        cell(fp, j->m->labels[best], 0);
        snprintf(num, sizeof num, "%.4f", pr[best]);
        cell(fp, num, 0);
        int to_review = bt->empty[r] || pr[best] < j->cut;
        cell(fp, to_review ? "review" : j->m->labels[best], 0);
        *review += (size_t)to_review;
        *routed += (size_t)!to_review;
        if (j->top > 1) {
            /* labels by probability, ties by label order */
            int *order = xcalloc(K, sizeof *order);
            for (size_t k = 0; k < K; k++)
                order[k] = (int)k;
            for (size_t a = 1; a < K; a++)
                for (size_t b = a; b > 0 && pr[order[b]] > pr[order[b - 1]]; b--) {
                    int t = order[b];
                    order[b] = order[b - 1];
                    order[b - 1] = t;
                }
            for (size_t t = 1; t < j->top; t++) {
                cell(fp, t < K ? j->m->labels[order[t]] : "", 0);
                snprintf(num, sizeof num, "%.4f", t < K ? pr[order[t]] : 0.0);
                cell(fp, t < K ? num : "", 0);
            }
            free(order);
        }
        if (j->explain)
            cell(fp, bt->why[r], 0);
        fputs("\r\n", fp);
    }
}

/* Refuse a batch holding a confidence that is not a finite number rather
 * than route on it (NaN compares false with the cut-off, so the row would go
 * out automatically).  Open reads no vector row, so a NaN or infinity in a
 * damaged vector set first shows here.  'done' rows came before the batch. */
static int batch_finite(const struct job *j, const struct batch *bt, size_t done, const char *in, struct err *e)
{
    size_t K = j->m->k;
    for (size_t r = 0; r < bt->n; r++)
        for (size_t k = 0; k < K; k++)
            if (!isfinite(bt->prob[r * K + k])) {
                err_set(e, in, 0, "data row %zu: the model's confidence is not a finite number, so it is not routed",
                        done + r + 1);
                return err_hint(e, "the vector set may be damaged: 'vecsift vectors info FILE --verify' checks every row");
            }
    return 0;
}

/* The header row.  Written only once the first batch has been read: a bad
 * row among the first BATCH rows then leaves nothing on stdout, where no
 * temporary file can be thrown away (a file output is discarded anyway). */
static void write_header(FILE *fp, const csv_reader *r, long top, long explain)
{
    size_t ncols = csv_ncols(r);
    for (size_t c = 0; c < ncols; c++)
        cell(fp, csv_colname(r, c), c == 0);
    cell(fp, "predicted", 0);
    cell(fp, "confidence", 0);
    cell(fp, "route", 0);
    for (long t = 2; t <= top; t++) {
        char h[48];
        snprintf(h, sizeof h, "label_%ld", t);
        cell(fp, h, 0);
        snprintf(h, sizeof h, "confidence_%ld", t);
        cell(fp, h, 0);
    }
    if (explain)
        cell(fp, "evidence", 0);
    fputs("\r\n", fp);
}

static int parse(int argc, char **argv, struct data_args *da, const char **out, double *cut, long *top,
                 long *explain, const char **vectors, char **pos)
{
    const struct cli_cmd *cmd = &cmd_predict_info;
    struct cli_parser p;
    cli_parser_init(&p, cmd, argc, argv);
    int i;
    const char *val;
    while ((i = cli_next(&p, &val)) >= 0) {
        const char *name = opt_name(cmd, i);
        int t = data_args_option(da, cmd, name, val);
        if (t < 0)
            break;
        if (t > 0)
            continue;
        if (strcmp(name, "output") == 0)
            *out = val;
        else if (strcmp(name, "vectors") == 0)
            *vectors = val;
        else if (strcmp(name, "review-below") == 0 && cli_double(cmd, name, val, 0, 1, cut) < 0)
            break;
        else if (strcmp(name, "top") == 0 && cli_long(cmd, name, val, 1, 1000, top) < 0)
            break;
        else if (strcmp(name, "explain") == 0 && cli_long(cmd, name, val, 1, 100, explain) < 0)
            break;
    }
    int rc = i == CLI_HELP ? -1 : i != CLI_END ? ERR_INPUT : 0;
    if (rc == 0 && p.npos != 2)
        rc = cli_usage(cmd, "predict takes a model file and an input file");
    if (rc == 0) {
        pos[0] = p.pos[0];
        pos[1] = p.pos[1];
    }
    cli_parser_release(&p);
    return rc;
}

int cmd_predict(int argc, char **argv)
{
    struct data_args da;
    data_args_init(&da);
    const char *out = "-", *vectors = NULL;
    double cut = -1;
    long top = 1, explain = 0;
    char *pos[2];
    int rc = parse(argc, argv, &da, &out, &cut, &top, &explain, &vectors, pos);
    if (rc != 0)
        return rc < 0 ? ERR_OK : rc;
    const char *model_path = pos[0], *in = pos[1];

    struct err e = ERR_INIT;
    struct model m = MODEL_INIT;
    struct vecset *vs = NULL;
    csv_reader *r = NULL;
    ofile *o = NULL;
    long *textcol = NULL;
    struct job j;
    memset(&j, 0, sizeof j);
    struct batch bt[2];
    memset(bt, 0, sizeof bt);
    struct pool pool;
    memset(&pool, 0, sizeof pool);
    size_t routed = 0, review = 0, rows = 0;

    const char *ins[] = { model_path, in, vectors };
    if (ofile_check_distinct(out, ins, 3, &e) < 0)
        goto fail;
    if (model_load(&m, model_path, vectors, &vs, &e) < 0)
        goto fail;
    if (explain && (pipeline_spec(m.pipe)->clf != CLF_LOGREG)) {
        rc = cli_usage(&cmd_predict_info, "--explain needs a logreg model: an SVM's scores do not split "
                                          "into per-word parts");
        goto done;
    }
    if (cut < 0)
        cut = m.review_below >= 0 ? m.review_below : 0;
    if (!(r = csv_open(in, &da.csv, &e)))
        goto fail;
    size_t ncols = csv_ncols(r);
    size_t ntext = da.ntext ? da.ntext : m.ntext;
    textcol = xcalloc(ntext, sizeof *textcol);
    for (size_t t = 0; t < ntext; t++)
        if ((textcol[t] = csv_require_col(r, da.ntext ? da.text_cols[t] : m.text_cols[t], &e)) < 0)
            goto fail;
    static const char *const ours[] = { "predicted", "confidence", "route" };
    for (size_t c = 0; c < ncols; c++)
        for (size_t q = 0; q < 3; q++)
            if (strcmp(csv_colname(r, c), ours[q]) == 0) {
                err_set(&e, csv_path(r), 1, "input already has a column '%s'", ours[q]);
                err_hint(&e, "rename or drop that column first");
                goto fail;
            }
    if (!(o = ofile_open(out, &e)))
        goto fail;
    FILE *fp = ofile_fp(o);
    /* A file output gets a 256 KiB buffer instead of libc's 4 KiB: the
     * write calls (one per buffer) showed in the profile.  Static, so it
     * outlives the stream; stdout keeps libc's buffer, since it stays open
     * after this function returns. */
    static char outbuf[1 << 18];
    if (strcmp(out, "-") != 0)
        setvbuf(fp, outbuf, _IOFBF, sizeof outbuf);

    j.pipe = m.pipe;
    j.m = &m;
    j.ncols = ncols;
    j.ntextcol = ntext;
    j.textcol = textcol;
    j.top = (size_t)top;
    j.explain = (size_t)explain;
    j.cut = cut;
    predict_batch_init(&bt[0], ncols, m.k);
    predict_batch_init(&bt[1], ncols, m.k);
    int more = predict_batch_read(&bt[0], r, ncols, &e);
    if (more < 0)
        goto fail;
    write_header(fp, r, top, explain);
    predict_pool_init(&pool, &j, da.threads);
    /* Batch 'cur' is scored while the previous one is written and the next
     * one read. */
    for (int cur = 0, have_prev = 0;; cur = 1 - cur, have_prev = 1) {
        predict_pool_start(&pool, &bt[cur]);
        if (have_prev) {
            if (batch_finite(&j, &bt[1 - cur], rows, in, &e) < 0) {
                predict_pool_finish(&pool);
                goto fail;
            }
            write_batch(fp, &j, &bt[1 - cur], &routed, &review);
            rows += bt[1 - cur].n;
        }
        int got = more ? predict_batch_read(&bt[1 - cur], r, ncols, &e) : 0;
        if (!more)
            predict_batch_clear(&bt[1 - cur]);
        predict_pool_finish(&pool);
        if (got < 0)
            goto fail;
        if (ferror(fp))
            break; /* a full disk or a closed pipe: stop reading, ofile_commit says why */
        if (!more) {
            if (batch_finite(&j, &bt[cur], rows, in, &e) < 0)
                goto fail;
            write_batch(fp, &j, &bt[cur], &routed, &review);
            rows += bt[cur].n;
            break;
        }
        more = got;
    }
    if (ofile_commit(o, &e) < 0) {
        o = NULL;
        goto fail;
    }
    o = NULL;
    if (csv_replaced(r))
        cli_warn("%s: %zu invalid UTF-8 sequences replaced by U+FFFD", in, csv_replaced(r));
    cli_warn_too_long(in, 0, predict_pool_too_long(&pool));
    cli_note("%zu rows: %zu routed automatically, %zu to review (cut-off %.3f)", rows, routed, review, cut);
    cli_note("note: a classifier misroutes some tickets; keep a person on the 'review' route and watch "
             "each queue's precision over time (README, Cautions)");
    goto done;
fail:
    rc = cli_fail(&e);
done:
    predict_pool_release(&pool);
    predict_batch_release(&bt[0]);
    predict_batch_release(&bt[1]);
    free(textcol);
    ofile_abort(o);
    csv_close(r);
    model_release(&m);
    vecset_close(vs);
    return rc;
}
