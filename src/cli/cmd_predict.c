/* cmd_predict.c -- `vecsift predict`: route the rows of a CSV with a model.
 *
 * Streams: rows are read in chunks (predict_run.c), routed by the
 * library's one prediction path (route.h) on par's stream (par.h), which
 * hands the chunks to the writer in input order.  Every row's output
 * depends on that row and the model alone, so the output is identical for
 * any --threads and for any split of the input into parts.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "commands.h"
#include "common.h"
#include "vecsift/csv.h"
#include "vecsift/err.h"
#include "vecsift/model.h"
#include "vecsift/ofile.h"
#include "vecsift/par.h"
#include "vecsift/pipeline.h"
#include "vecsift/route.h"
#include "vecsift/vecset.h"
#include "vecsift/xalloc.h"
#include "predict_run.h"
#include "predict_fields.h"

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

/* What the stream's callbacks share (par_stream_run). */
struct run {
    const struct model *m;
    csv_reader *r;
    FILE *fp;
    const long *textcol;
    size_t ncols, ntext, top, explain;
    long ltop, lexplain;
    route_worker **w;   /* one per thread */
    size_t routed, review, rows;
    int header_done;
    int out_failed;     /* the output stream failed: ofile_commit says why */
    char *why;          /* the writer's buffer for the top words */
    size_t whycap;
    struct err e;       /* the reader's error */
};

static void write_header(FILE *fp, const csv_reader *r, long top, long explain);

static void write_batch(struct run *u, const struct batch *bt)
{
    FILE *fp = u->fp;
    size_t K = u->m->k;
    char num[32];
    for (size_t r = 0; r < bt->n; r++) {
        for (size_t c = 0; c < u->ncols; c++)
            cell(fp, bt->cells[r * u->ncols + c], c == 0);
        const double *pr = bt->prob + r * K;
        const struct route_result *res = &bt->res[r];
        int best = res->label;
        cell(fp, u->m->labels[best], 0);
        snprintf(num, sizeof num, "%.4f", res->confidence);
        cell(fp, num, 0);
        cell(fp, res->review ? "review" : u->m->labels[best], 0);
        u->review += (size_t)res->review;
        u->routed += (size_t)!res->review;
        if (u->top > 1) {
            int *order = xcalloc(K, sizeof *order);
            predict_label_order(pr, K, order);
            for (size_t t = 1; t < u->top; t++) {
                cell(fp, t < K ? u->m->labels[order[t]] : "", 0);
                snprintf(num, sizeof num, "%.4f", t < K ? pr[order[t]] : 0.0);
                cell(fp, t < K ? num : "", 0);
            }
            free(order);
        }
        if (u->explain) {
            size_t len = predict_evidence(res, &u->why, &u->whycap);
            fputc(',', fp);
            csv_put(fp, u->why, len, 1);
        }
        fputs("\r\n", fp);
    }
    u->rows += bt->n;
}

static int stream_read(void *ctx, void *chunk)
{
    struct run *u = ctx;
    return predict_batch_read(chunk, u->r, u->ncols, u->textcol, u->ntext, &u->e);
}

static void stream_work(void *ctx, void *chunk, size_t worker)
{
    struct run *u = ctx;
    predict_batch_route(chunk, u->w[worker], u->ntext, u->m->k);
}

/* The header goes out with the first chunk (the column names are fixed
 * once the reader is open, so reading them here while another thread
 * reads rows is safe): par_stream writes a chunk
 * only once the next one has been read, so a bad row among the first
 * 2 x PREDICT_CHUNK rows leaves nothing on stdout, where no temporary file
 * can be thrown away (a file output is discarded anyway). */
/* Refuse a chunk holding a confidence that is not a finite number rather
 * than route on it (NaN compares false with the cut-off, so the row would go
 * out automatically).  Open reads no vector row, so a NaN or infinity in a
 * damaged vector set first shows here. */
static int batch_finite(struct run *u, const struct batch *bt)
{
    size_t K = u->m->k;
    for (size_t r = 0; r < bt->n; r++)
        for (size_t k = 0; k < K; k++)
            if (!isfinite(bt->prob[r * K + k])) {
                err_set(&u->e, csv_path(u->r), 0,
                        "data row %zu: the model's confidence is not a finite number, so it is not routed", u->rows + r + 1);
                return err_hint(&u->e, "the vector set may be damaged: 'vecsift vectors info FILE --verify' checks every row");
            }
    return 0;
}

static int stream_write(void *ctx, void *chunk)
{
    struct run *u = ctx;
    if (batch_finite(u, chunk) < 0)
        return -1;
    if (!u->header_done) {
        write_header(u->fp, u->r, u->ltop, u->lexplain);
        u->header_done = 1;
    }
    write_batch(u, chunk);
    if (ferror(u->fp)) { /* a full disk or a closed pipe: stop reading */
        u->out_failed = 1;
        return -1;
    }
    return 0;
}

/* The header row. */
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
    struct run u;
    memset(&u, 0, sizeof u);
    err_clear(&u.e);
    size_t T = da.threads > 1 ? (size_t)da.threads : 1, S = 2 * T + 2;
    struct batch *bt = xcalloc(S, sizeof *bt);
    void **slot = xcalloc(S, sizeof *slot);

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

    struct route_params rp = { cut, (size_t)explain };
    u.m = &m;
    u.r = r;
    u.fp = fp;
    u.textcol = textcol;
    u.ncols = ncols;
    u.ntext = ntext;
    u.top = (size_t)top;
    u.explain = (size_t)explain;
    u.ltop = top;
    u.lexplain = explain;
    u.w = xcalloc(T, sizeof *u.w);
    for (size_t t = 0; t < T; t++)
        u.w[t] = route_worker_new(&m, &rp);
    for (size_t q = 0; q < S; q++) {
        predict_batch_init(&bt[q], ncols, ntext, m.k);
        slot[q] = &bt[q];
    }
    /* Chunks are read in order, routed on any thread and written in
     * input order (par.h): the output does not depend on --threads. */
    struct par_stream ps = { slot, S, stream_read, stream_work, stream_write, &u };
    if (par_stream_run((int)T, &ps) < 0 && !u.out_failed) {
        e = u.e;
        goto fail;
    }
    if (ofile_commit(o, &e) < 0) {
        o = NULL;
        goto fail;
    }
    o = NULL;
    if (csv_replaced(r))
        cli_warn("%s: %zu invalid UTF-8 sequences replaced by U+FFFD", in, csv_replaced(r));
    char cuts[40];
    cut_format(cut, cuts, sizeof cuts);
    cli_note("%zu rows: %zu routed automatically, %zu to review (cut-off %s)", u.rows, u.routed, u.review, cuts);
    cli_note("note: a classifier misroutes some tickets; keep a person on the 'review' route and watch "
             "each queue's precision over time (README, Cautions)");
    goto done;
fail:
    rc = cli_fail(&e);
done:
    for (size_t t = 0; u.w && t < T; t++)
        route_worker_free(u.w[t]);
    free(u.w);
    free(u.why);
    for (size_t q = 0; q < S; q++)
        predict_batch_release(&bt[q]);
    free(bt);
    free(slot);
    free(textcol);
    ofile_abort(o);
    csv_close(r);
    model_release(&m);
    vecset_close(vs);
    return rc;
}
