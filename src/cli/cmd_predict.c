/* cmd_predict.c -- `vecsift predict`: route the rows of a CSV with a model.
 *
 * Streams: rows are read in batches, each batch is featurized and scored by
 * the worker threads (each takes a contiguous slice), then written in input
 * order.  Every row's output depends on that row and the model alone, so
 * the output is identical for any --threads and for any split of the input
 * into parts.
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

#define BATCH 4096

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

/* The settings every row shares. */
struct job {
    const pipeline *pipe;
    const struct model *m;
    size_t ncols, ntextcol;
    const long *textcol;
    size_t top, explain;
    double cut;
};

/* One batch of rows: read by the main thread, scored by all. */
struct batch {
    size_t n;
    char **cells;       /* (BATCH x ncols) into 'text' */
    size_t *cell_off;   /* (BATCH x ncols) offsets into 'text' while reading */
    char *text;         /* the cells back to back, NUL-terminated */
    size_t tlen, tcap;
    int *label;         /* (n) */
    double *prob;       /* (n x K) */
    char **why;         /* (n) explanation text or NULL */
    int *empty;         /* (n) */
};

/* What one thread keeps from row to row (and batch to batch). */
struct worker {
    struct text_tokens tt;
    features_memo *memo;
    struct fmat X;
    const char **ptr;
    size_t *lens;
    size_t cap;
    char *text;
    size_t tcap;
    const char **parts;
    const char **words;
    double *push;
};

static void worker_init(struct worker *w, const struct job *j)
{
    memset(w, 0, sizeof *w);
    text_tokens_clear(&w->tt);
    w->memo = features_memo_new(pipeline_featurizer(j->pipe));
    w->parts = xcalloc(j->ntextcol, sizeof *w->parts);
    w->words = j->explain ? xcalloc(j->explain, sizeof *w->words) : NULL;
    w->push = j->explain ? xcalloc(j->explain, sizeof *w->push) : NULL;
    features_alloc(pipeline_featurizer(j->pipe), 1, &w->X);
}

static void worker_release(struct worker *w)
{
    features_memo_free(w->memo);
    fmat_release(&w->X);
    text_tokens_release(&w->tt);
    free(w->ptr);
    free(w->lens);
    free(w->text);
    free(w->parts);
    free(w->words);
    free(w->push);
}

/* Route rows [from, to) of batch b. */
static void work(const struct job *j, struct worker *w, struct batch *b, size_t from, size_t to)
{
    size_t K = j->m->k;
    const featurizer *f = pipeline_featurizer(j->pipe);
    for (size_t r = from; r < to; r++) {
        /* the text columns joined as the training rows were */
        for (size_t t = 0; t < j->ntextcol; t++)
            w->parts[t] = b->cells[r * j->ncols + (size_t)j->textcol[t]];
        size_t tlen = dataset_join_text(&w->text, &w->tcap, w->parts, j->ntextcol);
        text_tokens_clear(&w->tt);
        struct err e = ERR_INIT;
        if (text_tokenize(w->text, tlen, &j->m->text, &w->tt, &e) < 0)
            text_tokens_clear(&w->tt); /* cannot happen: the reader checked UTF-8 */
        size_t nt = w->tt.n, cap = w->cap;
        w->ptr = xgrow(w->ptr, &cap, nt + 1, sizeof *w->ptr);
        w->lens = xreallocarray(w->lens, cap, sizeof *w->lens);
        w->cap = cap;
        for (size_t q = 0; q < nt; q++) {
            w->ptr[q] = text_token(&w->tt, q);
            w->lens[q] = (q + 1 < nt ? w->tt.off[q + 1] : w->tt.len) - w->tt.off[q] - 1;
        }
        /* A dense row is overwritten whole by each transform; a sparse one
         * is appended to and starts afresh. */
        if (features_sparse(f))
            features_alloc(f, 1, &w->X);
        struct features_stats st = { 0, 0, 0 };
        features_transform_memo(f, w->memo, w->ptr, w->lens, nt, &w->X, 0, &st);
        double *pr = b->prob + r * K;
        pipeline_proba_row(j->pipe, &w->X, 0, pr);
        int best = 0;
        for (size_t k = 1; k < K; k++)
            if (pr[k] > pr[best])
                best = (int)k;
        b->label[r] = best;
        b->empty[r] = st.with_vector == 0;
        if (j->explain) {
            size_t nw = pipeline_explain(j->pipe, w->ptr, nt, pr, best, j->explain, w->words, w->push);
            size_t len = 0, bcap = 0;
            char *s = NULL;
            for (size_t q = 0; q < nw; q++) {
                char item[256];
                int il = snprintf(item, sizeof item, "%s%.80s (%+.3f)", q ? "; " : "", w->words[q], w->push[q]);
                s = xgrow(s, &bcap, len + (size_t)il + 1, 1);
                memcpy(s + len, item, (size_t)il + 1);
                len += (size_t)il;
            }
            b->why[r] = s ? s : xstrdup("");
        }
    }
}

/* ---- the thread pool ---- */

/* Rows are handed out in chunks from a shared counter, so the threads
 * balance themselves; the main thread reads the next batch and writes the
 * previous one while the others score, then joins them.  Each row's result
 * depends on the row alone, so the output does not depend on who scored
 * what. */
#define CHUNK 64

struct pool {
    const struct job *j;
    pthread_mutex_t mu;
    pthread_cond_t go, done;
    struct batch *b;      /* the batch being scored */
    size_t next, finished;
    unsigned long gen;    /* counts batches handed out */
    int quit;
    size_t nthreads;      /* threads running beside the main one */
    pthread_t *tid;
    struct worker *w;     /* (nthreads + 1), [0] the main thread's */
};

struct pool_arg {
    struct pool *p;
    size_t id;
};

/* Take chunks of the current batch until none is left.  Called and
 * returns with p->mu held. */
static void take_chunks(struct pool *p, struct worker *w)
{
    struct batch *b = p->b;
    while (p->next < b->n) {
        size_t from = p->next, to = from + CHUNK < b->n ? from + CHUNK : b->n;
        p->next = to;
        pthread_mutex_unlock(&p->mu);
        work(p->j, w, b, from, to);
        pthread_mutex_lock(&p->mu);
        p->finished += to - from;
        if (p->finished == b->n)
            pthread_cond_broadcast(&p->done);
    }
}

static void *pool_thread(void *arg)
{
    struct pool_arg *a = arg;
    struct pool *p = a->p;
    unsigned long seen = 0;
    pthread_mutex_lock(&p->mu);
    for (;;) {
        while (p->gen == seen && !p->quit)
            pthread_cond_wait(&p->go, &p->mu);
        if (p->quit)
            break;
        seen = p->gen;
        take_chunks(p, &p->w[a->id]);
    }
    pthread_mutex_unlock(&p->mu);
    return NULL;
}

static void pool_init(struct pool *p, const struct job *j, int threads, struct pool_arg *args)
{
    memset(p, 0, sizeof *p);
    p->j = j;
    pthread_mutex_init(&p->mu, NULL);
    pthread_cond_init(&p->go, NULL);
    pthread_cond_init(&p->done, NULL);
    size_t T = threads > 1 ? (size_t)threads : 1;
    p->w = xcalloc(T, sizeof *p->w);
    p->tid = xcalloc(T, sizeof *p->tid);
    for (size_t t = 0; t < T; t++)
        worker_init(&p->w[t], j);
    for (size_t t = 1; t < T; t++) {
        args[t].p = p;
        args[t].id = t;
        if (pthread_create(&p->tid[p->nthreads], NULL, pool_thread, &args[t]) != 0)
            break; /* fewer threads: the others do the work */
        p->nthreads++;
    }
}

/* Hand batch b to the pool threads; returns at once. */
static void pool_start(struct pool *p, struct batch *b)
{
    pthread_mutex_lock(&p->mu);
    p->b = b;
    p->next = 0;
    p->finished = 0;
    p->gen++;
    pthread_cond_broadcast(&p->go);
    pthread_mutex_unlock(&p->mu);
}

/* Score what is left of the batch on this thread, then wait for the rest. */
static void pool_finish(struct pool *p)
{
    pthread_mutex_lock(&p->mu);
    take_chunks(p, &p->w[0]);
    while (p->finished < p->b->n)
        pthread_cond_wait(&p->done, &p->mu);
    pthread_mutex_unlock(&p->mu);
}

static void pool_release(struct pool *p)
{
    if (!p->w)
        return;
    pthread_mutex_lock(&p->mu);
    p->quit = 1;
    pthread_cond_broadcast(&p->go);
    pthread_mutex_unlock(&p->mu);
    for (size_t t = 0; t < p->nthreads; t++)
        pthread_join(p->tid[t], NULL);
    for (size_t t = 0; t < p->nthreads + 1; t++)
        worker_release(&p->w[t]);
    free(p->w);
    free(p->tid);
    pthread_mutex_destroy(&p->mu);
    pthread_cond_destroy(&p->go);
    pthread_cond_destroy(&p->done);
}

/* ---- batches ---- */

static void batch_init(struct batch *b, size_t ncols, size_t K)
{
    memset(b, 0, sizeof *b);
    b->cells = xcalloc(xmul(BATCH, ncols), sizeof *b->cells);
    b->cell_off = xcalloc(xmul(BATCH, ncols), sizeof *b->cell_off);
    b->label = xcalloc(BATCH, sizeof *b->label);
    b->prob = xcalloc(xmul(BATCH, K), sizeof *b->prob);
    b->empty = xcalloc(BATCH, sizeof *b->empty);
    b->why = xcalloc(BATCH, sizeof *b->why);
}

/* Forget the rows (and their explanations), keep the memory. */
static void batch_clear(struct batch *b)
{
    for (size_t q = 0; b->why && q < b->n; q++) {
        free(b->why[q]);
        b->why[q] = NULL;
    }
    b->n = 0;
    b->tlen = 0;
}

static void batch_release(struct batch *b)
{
    batch_clear(b);
    free(b->cells);
    free(b->cell_off);
    free(b->text);
    free(b->label);
    free(b->prob);
    free(b->empty);
    free(b->why);
}

/* Read up to BATCH rows into b (cleared first).  Returns 1 when the batch
 * is full (more rows may follow), 0 at the end of the input, -1 on error. */
static int batch_read(struct batch *b, csv_reader *r, size_t ncols, struct err *e)
{
    batch_clear(b);
    int got = 1;
    while (b->n < BATCH && (got = csv_next(r, e)) == 1) {
        for (size_t c = 0; c < ncols; c++) {
            /* the reader refuses NUL bytes: the length is the string's */
            size_t len = csv_field_len(r, c);
            b->text = xgrow(b->text, &b->tcap, b->tlen + len + 1, 1);
            memcpy(b->text + b->tlen, csv_field(r, c), len + 1);
            b->cell_off[b->n * ncols + c] = b->tlen;
            b->tlen += len + 1;
        }
        b->n++;
    }
    if (got < 0)
        return -1;
    for (size_t q = 0; q < b->n * ncols; q++)
        b->cells[q] = b->text + b->cell_off[q];
    return got;
}

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
    struct pool_arg *args = xcalloc(da.threads > 1 ? (size_t)da.threads : 1, sizeof *args);
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

    j.pipe = m.pipe;
    j.m = &m;
    j.ncols = ncols;
    j.ntextcol = ntext;
    j.textcol = textcol;
    j.top = (size_t)top;
    j.explain = (size_t)explain;
    j.cut = cut;
    batch_init(&bt[0], ncols, m.k);
    batch_init(&bt[1], ncols, m.k);
    int more = batch_read(&bt[0], r, ncols, &e);
    if (more < 0)
        goto fail;
    write_header(fp, r, top, explain);
    pool_init(&pool, &j, da.threads, args);
    /* Batch 'cur' is scored while the previous one is written and the next
     * one read. */
    for (int cur = 0, have_prev = 0;; cur = 1 - cur, have_prev = 1) {
        pool_start(&pool, &bt[cur]);
        if (have_prev) {
            write_batch(fp, &j, &bt[1 - cur], &routed, &review);
            rows += bt[1 - cur].n;
        }
        int got = more ? batch_read(&bt[1 - cur], r, ncols, &e) : 0;
        if (!more)
            batch_clear(&bt[1 - cur]);
        pool_finish(&pool);
        if (got < 0)
            goto fail;
        if (!more) {
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
    cli_note("%zu rows: %zu routed automatically, %zu to review (cut-off %.3f)", rows, routed, review, cut);
    cli_note("note: a classifier misroutes some tickets; keep a person on the 'review' route and watch "
             "each queue's precision over time (README, Cautions)");
    goto done;
fail:
    rc = cli_fail(&e);
done:
    pool_release(&pool);
    free(args);
    batch_release(&bt[0]);
    batch_release(&bt[1]);
    free(textcol);
    ofile_abort(o);
    csv_close(r);
    model_release(&m);
    vecset_close(vs);
    return rc;
}
