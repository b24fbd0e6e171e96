/* embed.c -- word vectors from unlabelled text: skip-gram with negative
 * sampling (Mikolov, Sutskever, Chen, Corrado and Dean 2013, "Distributed
 * Representations of Words and Phrases and their Compositionality").
 *
 * V = words kept after pruning, D = dimensions, K = negatives.  Two slabs of
 * float32: 'in' (V, D), the vectors we hand out, and 'out' (V, D), the
 * context-side vectors the objective needs and that are thrown away.
 *
 * Threads share both slabs and update them without locks, as the paper's
 * practice does (Hogwild: Recht, Re, Wright and Niu 2011, "Hogwild!: A
 * Lock-Free Approach to Parallelizing Stochastic Gradient Descent"): each
 * thread owns a contiguous share of the documents and its own rng child
 * stream.  With one thread every step happens in a fixed order, so a seed
 * gives byte-identical vectors.
 *
 * Checked against gensim's Word2Vec on identical tokens (tests/ext/
 * embed_agreement.py, tests/bench/bench_learn.py): our vectors agree with
 * gensim's 0.98-0.99 as well as gensim's agree with themselves across seeds.
 * Each of the choices below was tried the other way on Moby-Dick and on
 * SpamAssassin mail (ratio of that agreement, 2 threads, December 2026):
 * keep sqrt(t/f) as the paper writes it 0.69 / 0.94; a fixed window 0.94 /
 * 0.94; the learning rate restarting each epoch 0.92 / 0.93; unigram^1 noise
 * 0.94 / 0.96, uniform noise 0.34 / 0.83; windows across documents 0.93 /
 * 0.96; start vectors in [-0.5, 0.5) instead of [-0.5/D, 0.5/D) 0.07 / 0.78;
 * against 0.975 / 0.981 as built.  Two made no difference: training the
 * centre word's own vector on its contexts instead of each context's on the
 * centre (0.970 / 0.979), and skipping updates where |x| >= 6 as gensim's
 * table does (0.982 / 0.983).
 *
 * It does not write files (the caller uses vecset_write) and never prints.
 */
#include "vecsift/embed.h"

#include <errno.h>
#include <math.h>
#include <pthread.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/csv.h"
#include "vecsift/err.h"
#include "vecsift/pieces.h"
#include "vecsift/rng.h"
#include "vecsift/text.h"
#include "vecsift/vecset.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"

/* ---- parameters ---- */

int embed_params_check(const struct embed_params *p, struct err *e)
{
    if (p->dim < 1 || p->dim > EMBED_MAX_DIM)
        return err_set(e, NULL, 0, "--dimensions must be 1..%d, not %zu", EMBED_MAX_DIM, p->dim);
    if (p->window < 1)
        return err_set(e, NULL, 0, "--window must be at least 1, not %d", p->window);
    if (p->negatives < 1)
        return err_set(e, NULL, 0, "--negatives must be at least 1, not %d", p->negatives);
    if (p->epochs < 1)
        return err_set(e, NULL, 0, "--epochs must be at least 1, not %d", p->epochs);
    if (!(p->subsample >= 0 && p->subsample < 1))
        return err_set(e, NULL, 0, "--subsample must be in [0, 1), not %g", p->subsample);
    if (!(p->learning_rate > 0 && p->learning_rate <= 10))
        return err_set(e, NULL, 0, "--learning-rate must be in (0, 10], not %g", p->learning_rate);
    if (p->threads < 1)
        return err_set(e, NULL, 0, "--threads must be at least 1, not %d", p->threads);
    return 0;
}

/* ---- corpus ---- */

void embed_corpus_release(struct embed_corpus *c)
{
    if (c->words)
        for (size_t i = 0; i < c->nwords; i++)
            free(c->words[i]);
    free(c->words);
    free(c->count);
    free(c->off);
    free(c->tok);
    *c = (struct embed_corpus)EMBED_CORPUS_INIT;
}

struct rank {
    const char *word;
    uint64_t count;
    int32_t old;
};

static int by_count_then_bytes(const void *a, const void *b)
{
    const struct rank *x = a, *y = b;
    if (x->count != y->count)
        return x->count > y->count ? -1 : 1;
    return strcmp(x->word, y->word);
}

/* Prune words below 'min_freq' from the interned documents 'd' and renumber
 * the rest by rank. */
static int corpus_finish(struct embed_corpus *c, const struct tokdocs *d, uint64_t min_freq,
                         const char *name, struct err *e)
{
    size_t nv = d->v ? vocab_size(d->v) : 0;
    c->ndocs = d->n;
    c->tokens_read = d->n ? d->off[d->n] : 0;
    if (c->tokens_read == 0 && d->n == 0)
        return err_set(e, name, 0, "no words in the corpus: it is empty");
    if (c->tokens_read == 0)
        return err_set(e, name, 0, "no words in the corpus: its %zu %s hold none", d->n,
                       d->n == 1 ? "document" : "documents");

    struct rank *r = xcalloc(nv, sizeof *r);
    size_t V = 0;
    uint64_t best = 0;
    for (size_t i = 0; i < nv; i++) {
        uint64_t n = vocab_count(d->v, (int32_t)i);
        if (n > best)
            best = n;
        if (n >= min_freq)
            r[V++] = (struct rank){ vocab_word(d->v, (int32_t)i), n, (int32_t)i };
    }
    if (V == 0) {
        free(r);
        err_set(e, name, 0, "no word occurs %llu times or more (the most frequent occurs %llu times)",
                (unsigned long long)min_freq, (unsigned long long)best);
        return err_hint(e, "lower --min-freq or give a larger corpus");
    }
    if (V > INT32_MAX) {
        free(r);
        return err_set(e, name, 0, "too many distinct words (%zu)", V);
    }
    qsort(r, V, sizeof *r, by_count_then_bytes);

    int32_t *map = xmalloc(xmul(nv, sizeof *map));
    for (size_t i = 0; i < nv; i++)
        map[i] = -1;
    c->nwords = V;
    c->words = xcalloc(V, sizeof *c->words);
    c->count = xcalloc(V, sizeof *c->count);
    for (size_t i = 0; i < V; i++) {
        map[r[i].old] = (int32_t)i;
        c->words[i] = xstrdup(r[i].word);
        c->count[i] = r[i].count;
    }
    free(r);

    c->off = xcalloc(d->n + 1, sizeof *c->off);
    c->tok = xmalloc(xmul(c->tokens_read ? c->tokens_read : 1, sizeof *c->tok));
    size_t m = 0;
    for (size_t i = 0; i < d->n; i++) {
        c->off[i] = m;
        for (size_t j = d->off[i]; j < d->off[i + 1]; j++)
            if (map[d->tok[j]] >= 0)
                c->tok[m++] = map[d->tok[j]];
    }
    c->off[d->n] = m;
    free(map);
    return 0;
}

int embed_corpus_from_tokens(struct embed_corpus *c, const char *const *const *docs,
                             const size_t *lens, size_t ndocs, uint64_t min_freq, const char *name,
                             struct err *e)
{
    struct tokdocs d = TOKDOCS_INIT;
    for (size_t i = 0; i < ndocs; i++)
        tokdocs_add(&d, docs[i], lens[i]);
    int rc = corpus_finish(c, &d, min_freq, name, e);
    c->lines = ndocs;
    tokdocs_release(&d);
    if (rc < 0)
        embed_corpus_release(c);
    return rc;
}

static int ends_with(const char *s, const char *suffix)
{
    size_t n = strlen(s), m = strlen(suffix);
    return n >= m && strcmp(s + n - m, suffix) == 0;
}

/* Append the tokens of t to d as one document. */
static void add_doc(struct tokdocs *d, const struct text_tokens *t, const char ***ptrs, size_t *cap)
{
    if (t->n > *cap)
        *ptrs = xgrow((void *)*ptrs, cap, t->n, sizeof **ptrs);
    for (size_t i = 0; i < t->n; i++)
        (*ptrs)[i] = text_token(t, i);
    tokdocs_add(d, *ptrs, t->n);
}

static int tokenize_at(const char *s, size_t len, const struct text_options *to,
                       struct text_tokens *t, const char *path, long line, struct err *e)
{
    struct err sub = ERR_INIT;
    if (text_tokenize(s, len, to, t, &sub) < 0)
        return err_set(e, path, line, "%s", sub.msg);
    return 0;
}

static int read_plain(const struct embed_source *src, struct tokdocs *d, size_t *lines, struct err *e)
{
    const char *name = strcmp(src->path, "-") == 0 ? "<stdin>" : src->path;
    FILE *fp = strcmp(src->path, "-") == 0 ? stdin : fopen(src->path, "rb");
    if (!fp)
        return err_io(e, name, 0, "cannot open: %s", strerror(errno));
    struct text_tokens t = TEXT_TOKENS_INIT;
    const char **ptrs = NULL;
    size_t cap = 0, bufcap = 0;
    char *buf = NULL;
    ssize_t len;
    long line = 0;
    int rc = 0;
    while ((len = getline(&buf, &bufcap, fp)) >= 0) {
        line++;
        const char *s = buf;
        if (line == 1 && len >= 3 && memcmp(s, "\xEF\xBB\xBF", 3) == 0) {
            s += 3; /* byte-order mark */
            len -= 3;
        }
        text_tokens_clear(&t);
        if ((rc = tokenize_at(s, (size_t)len, src->text, &t, name, line, e)) < 0)
            break;
        add_doc(d, &t, &ptrs, &cap);
    }
    if (rc == 0 && ferror(fp))
        rc = err_io(e, name, line + 1, "read failed: %s", strerror(errno));
    if (fp != stdin)
        fclose(fp);
    free(buf);
    free(ptrs);
    text_tokens_release(&t);
    *lines = (size_t)line;
    return rc;
}

static int read_csv(const struct embed_source *src, struct tokdocs *d, size_t *lines, struct err *e)
{
    struct csv_options co = CSV_OPTIONS_INIT;
    csv_reader *r = csv_open(src->path, src->csv ? src->csv : &co, e);
    if (!r)
        return -1;
    long *col = xcalloc(src->ncols ? src->ncols : 1, sizeof *col);
    size_t ncols = src->ncols;
    int rc = 0;
    if (ncols == 0) {
        /* a .csv without --text-col: a lone column is the text, else the
         * column called "text" (the default of the other commands) */
        if (csv_ncols(r) > 1 && (col[0] = csv_col(r, "text")) < 0) {
            rc = err_set(e, csv_path(r), 1, "no --text-col given and no column 'text'");
            err_hint(e, "name the text column with --text-col");
        }
        ncols = 1;
    }
    for (size_t i = 0; rc == 0 && i < src->ncols; i++)
        if ((col[i] = csv_require_col(r, src->cols[i], e)) < 0)
            rc = -1;
    struct text_tokens t = TEXT_TOKENS_INIT;
    const char **ptrs = NULL;
    size_t cap = 0;
    int more;
    while (rc == 0 && (more = csv_next(r, e)) != 0) {
        if (more < 0) {
            rc = -1;
            break;
        }
        text_tokens_clear(&t);
        for (size_t i = 0; rc == 0 && i < ncols; i++)
            rc = tokenize_at(csv_field(r, (size_t)col[i]), csv_field_len(r, (size_t)col[i]),
                             src->text, &t, csv_path(r), csv_line(r), e);
        if (rc == 0)
            add_doc(d, &t, &ptrs, &cap);
        (*lines)++;
    }
    free(ptrs);
    free(col);
    text_tokens_release(&t);
    csv_close(r);
    return rc;
}

int embed_corpus_read(struct embed_corpus *c, const struct embed_source *src, struct err *e)
{
    struct tokdocs d = TOKDOCS_INIT;
    size_t lines = 0;
    int csv = src->ncols > 0 || ends_with(src->path, ".csv");
    int rc = csv ? read_csv(src, &d, &lines, e) : read_plain(src, &d, &lines, e);
    if (rc == 0)
        rc = corpus_finish(c, &d, src->min_freq,
                           strcmp(src->path, "-") == 0 ? "<stdin>" : src->path, e);
    c->lines = lines;
    tokdocs_release(&d);
    if (rc < 0)
        embed_corpus_release(c);
    return rc;
}

/* ---- noise distribution and subsampling ---- */

/* The paper (section 2.3) discards with probability 1 - sqrt(t/f), i.e.
 * keeps sqrt(t/f).  We keep sqrt(t/f) + t/f instead: the variant Levy,
 * Goldberg and Dagan (2015, "Improving Distributional Similarity with
 * Lessons Learned from Word Embeddings", TACL) report in the authors'
 * released implementation (from memory).  Tried the paper's form first: on
 * a 190,000-token corpus it keeps only 61% of a word seen 50 times, and the
 * pairwise similarities of the 300 most frequent words agreed with gensim's
 * (which uses the variant) at Spearman 0.57, against 0.82 between two gensim
 * seeds.  Team corpora are that small, so the gentler form is the default. */
double embed_keep_prob(uint64_t count, uint64_t total, double t)
{
    if (t <= 0 || count == 0)
        return 1.0;
    double r = t / ((double)count / (double)total);
    double keep = sqrt(r) + r;
    return keep < 1.0 ? keep : 1.0;
}

/* Walker's alias method (Walker 1977, "An Efficient Method for Generating
 * Discrete Random Variables with General Distributions", ACM TOMS), built
 * with Vose's stable two-list construction (Vose 1991, "A Linear Algorithm
 * for Generating Random Numbers with a Given Distribution", IEEE TSE).
 * Column j keeps itself with probability thr[j] / 2^32, else gives alias[j].
 * Exact up to 2^-32 per column, and V entries instead of the large
 * repeated-id table (1e8 entries) often used for the same purpose. */
struct embed_noise {
    size_t n;
    uint32_t *thr;      /* (n) */
    int32_t *alias;     /* (n) */
};

embed_noise *embed_noise_new(const uint64_t *count, size_t n, double power)
{
    embed_noise *q = xcalloc(1, sizeof *q);
    q->n = n;
    q->thr = xcalloc(n, sizeof *q->thr);
    q->alias = xcalloc(n, sizeof *q->alias);
    double *p = xcalloc(n, sizeof *p);
    size_t *small = xcalloc(n, sizeof *small), *large = xcalloc(n, sizeof *large);
    size_t ns = 0, nl = 0;
    double sum = 0;
    for (size_t i = 0; i < n; i++)
        sum += p[i] = pow((double)count[i], power);
    for (size_t i = 0; i < n; i++) {
        p[i] = sum > 0 ? p[i] * (double)n / sum : 1.0;
        q->alias[i] = (int32_t)i;
        if (p[i] < 1.0)
            small[ns++] = i;
        else
            large[nl++] = i;
    }
    while (ns > 0 && nl > 0) {
        size_t s = small[--ns], l = large[nl - 1];
        q->thr[s] = (uint32_t)(p[s] * 4294967296.0);
        q->alias[s] = (int32_t)l;
        p[l] -= 1.0 - p[s];
        if (p[l] < 1.0) {
            nl--;
            small[ns++] = l;
        }
    }
    /* what remains is 1 up to rounding: always keep itself */
    while (nl > 0)
        q->thr[large[--nl]] = UINT32_MAX;
    while (ns > 0)
        q->thr[small[--ns]] = UINT32_MAX;
    free(p);
    free(small);
    free(large);
    return q;
}

void embed_noise_free(embed_noise *q)
{
    if (!q)
        return;
    free(q->thr);
    free(q->alias);
    free(q);
}

int32_t embed_noise_draw(const embed_noise *q, uint64_t bits)
{
    /* high 32 bits pick the column (Lemire's multiply-shift), low 32 the coin */
    size_t j = (size_t)(((bits >> 32) * (uint64_t)q->n) >> 32);
    uint32_t coin = (uint32_t)bits;
    if (coin < q->thr[j] || q->thr[j] == UINT32_MAX)
        return (int32_t)j;
    return q->alias[j];
}

/* ---- training ---- */

/* Words between progress updates (and learning-rate updates). */
#define STEP_WORDS 10000

struct shared {
    const struct embed_corpus *c;
    const struct embed_params *p;
    float *in, *out;            /* (V, D) each */
    const uint32_t *keep;       /* (V) keep when 32 random bits are below; UINT32_MAX = always */
    const embed_noise *noise;
    uint64_t total;             /* epochs x corpus words */
    _Atomic uint64_t done;      /* words processed by all threads */
    embed_progress_fn progress;
    void *ud;
    const struct embed_pieces *pc;  /* NULL: whole words only */
    float *pin;                 /* (P, D) piece rows, with pc */
};

struct worker {
    struct shared *s;
    size_t doc_lo, doc_hi;
    struct rng rng;
    int first;
    pthread_t tid;
};

/* The sigmoid is computed rather than read from a table: each (word,
 * context) pair costs (K + 1) x 3D multiply-adds, against which K + 1
 * exponentials are a few per cent at D = 100, and computed values avoid the
 * table's quantisation and its hard cut-off (gradient set to zero or one
 * beyond |x| = 6).  Not with expf: glibc picks an FMA variant of it where
 * the CPU has one, which need not round the same, and one-thread runs must
 * give the same bits on every CPU.  Instead plain IEEE float arithmetic in
 * a fixed order (common practice, the method of Cody and Waite 1980,
 * "Software Manual for the Elementary Functions"): e^t = 2^n e^r with
 * n = round(t / ln 2), r = t - n ln 2 in two parts (ln 2's high part has
 * few enough bits that n times it is exact), e^r by its Taylor series to
 * r^7 (|r| <= ln 2 / 2: truncation error under 1e-8 relative), 2^n put in
 * the exponent bits.  t is clamped to [-87, 87], inside float's range; the
 * sigmoid there is 0 or 1 to float precision anyway. */
static inline float sigmoid(float x)
{
    float t = -x;
    t = t < 87.0f ? t : 87.0f; /* NaN (a run diverged) too: no undefined conversion below */
    t = t > -87.0f ? t : -87.0f;
    /* round to nearest by adding and taking away 1.5 x 2^23 (no libm call) */
    float n = (t * 1.44269504f + 12582912.0f) - 12582912.0f;
    float r = (t - n * 0.693145751953125f) - n * 1.42860677e-06f;
    float p = 1.0f + r * (1.0f + r * (0.5f + r * (1.0f / 6 + r * (1.0f / 24 + r * (1.0f / 120 +
              r * (1.0f / 720 + r * (1.0f / 5040)))))));
    uint32_t bits = (uint32_t)((int32_t)n + 127) << 23;
    float two_n;
    memcpy(&two_n, &bits, sizeof two_n);
    return 1.0f / (1.0f + p * two_n);
}

float embed_sigmoid(float x)
{
    return sigmoid(x);
}

/* Hand-blocked by four floats with GCC/Clang vector extensions: the build
 * uses -O2, where GCC 12 leaves these loops scalar (measured: 4 packed
 * instructions in the whole loop); blocks of v4 turn into SSE on any
 * x86-64 and into NEON on arm64 without extra flags.  Each block keeps
 * its own partial sums, so the dot product's rounding differs from a plain
 * loop but is fixed for a given D: runs still repeat exactly. */
typedef float v4 __attribute__((vector_size(16)));

static inline v4 load4(const float *p)
{
    v4 v;
    memcpy(&v, p, sizeof v);
    return v;
}

static inline void store4(float *p, v4 v)
{
    memcpy(p, &v, sizeof v);
}

static inline float dot(const float *restrict a, const float *restrict b, size_t D)
{
    v4 s0 = { 0, 0, 0, 0 }, s1 = s0;
    size_t i = 0;
    for (; i + 8 <= D; i += 8) {
        s0 += load4(a + i) * load4(b + i);
        s1 += load4(a + i + 4) * load4(b + i + 4);
    }
    s0 += s1;
    float r = (s0[0] + s0[1]) + (s0[2] + s0[3]);
    for (; i < D; i++)
        r += a[i] * b[i];
    return r;
}

/* grad += g l2 and l2 += g l1 in one pass (grad takes l2 before its update). */
static inline void update_pair(float g, const float *restrict l1, float *restrict l2,
                               float *restrict grad, size_t D)
{
    v4 g4 = { g, g, g, g };
    size_t i = 0;
    for (; i + 4 <= D; i += 4) {
        v4 o = load4(l2 + i);
        store4(grad + i, load4(grad + i) + g4 * o);
        store4(l2 + i, o + g4 * load4(l1 + i));
    }
    for (; i < D; i++) {
        float o = l2[i];
        grad[i] += g * o;
        l2[i] = o + g * l1[i];
    }
}

static inline void add_to(const float *restrict x, float *restrict y, size_t D)
{
    size_t i = 0;
    for (; i + 4 <= D; i += 4)
        store4(y + i, load4(y + i) + load4(x + i));
    for (; i < D; i++)
        y[i] += x[i];
}

/* ---- the input side of a pair: a word's row, or with pieces its mean ---- */

/* Bojanowski et al. (2017), section 3.2: with pieces a word's input vector
 * is built from its own row and the rows of its pieces.  We take the mean
 * (the authors' released code does; the paper writes the sum, which only
 * rescales), and each of those rows then takes the whole gradient. */
static const float *input_rows(const struct shared *s, int32_t w, float *hid)
{
    const size_t D = s->p->dim;
    const float *own = s->in + (size_t)w * D;
    if (!s->pc)
        return own;
    const size_t lo = s->pc->off[w], hi = s->pc->off[w + 1];
    memcpy(hid, own, D * sizeof *hid);
    for (size_t k = lo; k < hi; k++)
        add_to(s->pin + (size_t)s->pc->row[k] * D, hid, D);
    float inv = 1.0f / (float)(1 + hi - lo);
    for (size_t d = 0; d < D; d++)
        hid[d] *= inv;
    return hid;
}

static void input_update(const struct shared *s, int32_t w, const float *grad)
{
    const size_t D = s->p->dim;
    add_to(grad, s->in + (size_t)w * D, D);
    if (!s->pc)
        return;
    for (size_t k = s->pc->off[w]; k < s->pc->off[w + 1]; k++)
        add_to(grad, s->pin + (size_t)s->pc->row[k] * D, D);
}

/* Piece rows start as word rows do, uniform in [-0.5/D, 0.5/D), from a
 * stream of their own: the word rows' draws do not change. */
static void pieces_start(const struct embed_pieces *pc, size_t D, const struct rng *root, float *pvec)
{
    struct rng r;
    rng_child(root, (uint64_t)1 << 63, &r);
    float scale = 1.0f / (float)D;
    for (size_t i = 0; i < pc->nrows * D; i++)
        pvec[i] = (float)(rng_uniform(&r) - 0.5) * scale;
}

/* Each word's vector handed out: the mean of its row and its pieces' rows,
 * the input vector training used (the paper's representation of a word). */
static void pieces_finish(const struct shared *s, float *vec)
{
    const size_t D = s->p->dim;
    float *hid = xcalloc(D, sizeof *hid);
    for (size_t i = 0; i < s->c->nwords; i++) {
        input_rows(s, (int32_t)i, hid);
        memcpy(vec + i * D, hid, D * sizeof *hid);
    }
    free(hid);
}

static void *work(void *arg)
{
    struct worker *w = arg;
    struct shared *s = w->s;
    const struct embed_corpus *c = s->c;
    const struct embed_params *p = s->p;
    const size_t D = p->dim;
    const int K = p->negatives;
    const uint32_t win = (uint32_t)p->window;
    const double lr0 = p->learning_rate;
    float *grad = xcalloc(D, sizeof *grad);
    float *hid = s->pc ? xcalloc(D, sizeof *hid) : NULL; /* a word's mean with its pieces */
    size_t maxlen = 0;
    for (size_t d = w->doc_lo; d < w->doc_hi; d++)
        if (c->off[d + 1] - c->off[d] > maxlen)
            maxlen = c->off[d + 1] - c->off[d];
    int32_t *buf = xcalloc(maxlen ? maxlen : 1, sizeof *buf);
    uint64_t pending = 0;
    float lr = (float)lr0;

    for (int ep = 0; ep < p->epochs; ep++) {
        for (size_t d = w->doc_lo; d < w->doc_hi; d++) {
            const int32_t *doc = c->tok + c->off[d];
            size_t len = c->off[d + 1] - c->off[d], n = 0;
            for (size_t i = 0; i < len; i++) {
                uint32_t k = s->keep[doc[i]];
                if (k == UINT32_MAX || (uint32_t)(rng_next(&w->rng) >> 32) < k)
                    buf[n++] = doc[i];
            }
            pending += len;
            if (pending >= STEP_WORDS) {
                uint64_t done = atomic_fetch_add_explicit(&s->done, pending, memory_order_relaxed) + pending;
                pending = 0;
                /* linear decay to 1e-4 of the starting rate, as in the paper's practice */
                double frac = 1.0 - (double)done / (double)(s->total + 1);
                lr = (float)(lr0 * (frac > 1e-4 ? frac : 1e-4));
                if (w->first && s->progress)
                    s->progress(s->ud, done, s->total);
            }
            for (size_t i = 0; i < n; i++) {
                /* the window shrinks to b in [1, window] uniformly: nearer
                 * words are seen more often (the paper's practice) */
                uint32_t b = win - (uint32_t)(((rng_next(&w->rng) >> 32) * win) >> 32);
                size_t lo = i >= b ? i - b : 0, hi = i + b < n ? i + b : n - 1;
                int32_t centre = buf[i];
                for (size_t j = lo; j <= hi; j++) {
                    if (j == i)
                        continue;
                    const float *l1 = input_rows(s, buf[j], hid);
                    memset(grad, 0, D * sizeof *grad);
                    for (int k = 0; k <= K; k++) {
                        int32_t target;
                        float label;
                        if (k == 0) {
                            target = centre;
                            label = 1.0f;
                        } else {
                            target = embed_noise_draw(s->noise, rng_next(&w->rng));
                            if (target == centre)
                                continue;
                            label = 0.0f;
                        }
                        float *l2 = s->out + (size_t)target * D;
                        float g = (label - sigmoid(dot(l1, l2, D))) * lr;
                        update_pair(g, l1, l2, grad, D);
                    }
                    input_update(s, buf[j], grad);
                }
            }
        }
    }
    if (pending) {
        uint64_t done = atomic_fetch_add_explicit(&s->done, pending, memory_order_relaxed) + pending;
        if (w->first && s->progress)
            s->progress(s->ud, done, s->total);
    }
    free(grad);
    free(hid);
    free(buf);
    return NULL;
}

/* First document of thread t's share: shares hold about equal token counts. */
static size_t share_start(const struct embed_corpus *c, int t, int T)
{
    uint64_t N = c->off[c->ndocs];
    uint64_t want = N * (uint64_t)t / (uint64_t)T;
    size_t lo = 0, hi = c->ndocs; /* smallest d with off[d] >= want */
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (c->off[mid] < want)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

static int train(const struct embed_corpus *c, const struct embed_params *p, const struct embed_pieces *pc,
                 float *vec, float *pvec, const unsigned char *known, embed_progress_fn progress, void *ud,
                 struct err *e);

int embed_train(const struct embed_corpus *c, const struct embed_params *p, float *vec,
                const unsigned char *known, embed_progress_fn progress, void *ud,
                struct err *e)
{
    return train(c, p, NULL, vec, NULL, known, progress, ud, e);
}

static int train(const struct embed_corpus *c, const struct embed_params *p, const struct embed_pieces *pc,
                 float *vec, float *pvec, const unsigned char *known, embed_progress_fn progress, void *ud,
                 struct err *e)
{
    if (embed_params_check(p, e) < 0)
        return -1;
    size_t V = c->nwords, D = p->dim;
    uint64_t N = c->ndocs ? c->off[c->ndocs] : 0;
    if (V == 0 || N == 0)
        return err_set(e, NULL, 0, "no words to learn from");

    struct rng root, r;
    rng_seed(&root, p->seed);
    rng_child(&root, 0, &r);
    float scale = 1.0f / (float)D;
    for (size_t i = 0; i < V; i++) {
        float *row = vec + i * D;
        int keep = known && known[i];
        for (size_t k = 0; k < D; k++) {
            /* draw even for known rows, so the others do not depend on which are known */
            float u = (float)(rng_uniform(&r) - 0.5) * scale;
            if (!keep)
                row[k] = u;
        }
    }

    if (pc)
        pieces_start(pc, D, &root, pvec);

    uint64_t total_count = 0;
    for (size_t i = 0; i < V; i++)
        total_count += c->count[i];
    uint32_t *keep = xmalloc(xmul(V, sizeof *keep));
    for (size_t i = 0; i < V; i++) {
        double k = embed_keep_prob(c->count[i], total_count, p->subsample);
        keep[i] = k >= 1.0 ? UINT32_MAX : (uint32_t)(k * 4294967296.0);
    }

    struct shared s = {
        .c = c, .p = p, .in = vec,
        .out = xcalloc(V, xmul(D, sizeof(float))), /* zero start, the paper's practice */
        .keep = keep,
        .noise = embed_noise_new(c->count, V, 0.75),
        .total = N * (uint64_t)p->epochs,
        .progress = progress, .ud = ud,
        .pc = pc, .pin = pvec,
    };
    atomic_init(&s.done, 0);

    int T = p->threads;
    struct worker *w = xcalloc((size_t)T, sizeof *w);
    for (int t = 0; t < T; t++) {
        w[t].s = &s;
        w[t].doc_lo = share_start(c, t, T);
        w[t].doc_hi = share_start(c, t + 1, T);
        w[t].first = t == 0;
        rng_child(&root, (uint64_t)t + 1, &w[t].rng);
    }
    int started = 0, rc = 0;
    if (T == 1) {
        work(&w[0]);
    } else {
        for (; started < T; started++)
            if (pthread_create(&w[started].tid, NULL, work, &w[started]) != 0)
                break;
        for (int t = 0; t < started; t++)
            pthread_join(w[t].tid, NULL);
        if (started < T)
            rc = err_io(e, NULL, 0, "cannot start training thread %d of %d", started + 1, T);
        else if (progress)
            /* the first thread may finish before the others: report the end */
            progress(ud, atomic_load(&s.done), s.total);
    }
    free(w);
    free(s.out);
    free(keep);
    embed_noise_free((embed_noise *)s.noise);
    if (pc && rc == 0)
        pieces_finish(&s, vec);
    return rc;
}

long embed_start_from(const struct embed_corpus *c, const vecset *from, size_t dim, float *vec,
                      unsigned char *known, struct err *e)
{
    if (vecset_dim(from) != dim) {
        err_set(e, vecset_path(from), 0, "has %zu dimensions, but --dimensions is %zu",
                vecset_dim(from), dim);
        return err_hint(e, "pass --dimensions %zu to continue from this vector set", vecset_dim(from));
    }
    long found = 0;
    for (size_t i = 0; i < c->nwords; i++) {
        long row = vecset_find(from, c->words[i]);
        if (row < 0)
            continue;
        memcpy(vec + i * dim, vecset_row(from, (size_t)row), dim * sizeof(float));
        known[i] = 1;
        found++;
    }
    return found;
}

/* ---- pieces: character n-grams (Bojanowski et al. 2017) ---- */

static int by_u32(const void *a, const void *b)
{
    uint32_t x = *(const uint32_t *)a, y = *(const uint32_t *)b;
    return (x > y) - (x < y);
}

void embed_pieces_build(struct embed_pieces *pc, const struct embed_corpus *c, const struct pieces_params *p)
{
    *pc = (struct embed_pieces)EMBED_PIECES_INIT;
    pc->p = *p;
    size_t V = c->nwords;
    pc->off = xcalloc(V + 1, sizeof *pc->off);
    size_t cap = 0, n = 0;
    uint32_t *ids = NULL;
    for (size_t i = 0; i < V; i++) {
        const char *wd = c->words[i];
        size_t len = strlen(wd);
        size_t k = pieces_buckets(wd, len, p, NULL, 0);
        if (k == 0) {
            pc->off[i + 1] = n; /* "a": no piece of 3 or more characters */
            continue;
        }
        ids = xgrow(ids, &cap, n + k, sizeof *ids);
        pieces_buckets(wd, len, p, ids + n, k);
        /* a word's pieces as a set of rows: two pieces in one bucket share it once */
        qsort(ids + n, k, sizeof *ids, by_u32);
        size_t u = 0;
        for (size_t j = 0; j < k; j++)
            if (u == 0 || ids[n + j] != ids[n + u - 1])
                ids[n + u++] = ids[n + j];
        n += u;
        pc->off[i + 1] = n;
    }
    /* the distinct buckets, ascending: the piece rows in store order */
    uint32_t *sorted = xmalloc(xmul(n ? n : 1, sizeof *sorted));
    if (n) {
        memcpy(sorted, ids, n * sizeof *sorted);
        qsort(sorted, n, sizeof *sorted, by_u32);
    }
    size_t P = 0;
    for (size_t j = 0; j < n; j++)
        if (P == 0 || sorted[j] != sorted[P - 1])
            sorted[P++] = sorted[j];
    pc->nrows = P;
    pc->bucket = sorted;
    for (size_t j = 0; j < n; j++) {
        const uint32_t *at = bsearch(&ids[j], sorted, P, sizeof *sorted, by_u32);
        ids[j] = (uint32_t)(at - sorted);
    }
    pc->row = ids ? ids : xcalloc(1, sizeof *ids);
}

void embed_pieces_release(struct embed_pieces *pc)
{
    free(pc->bucket);
    free(pc->off);
    free(pc->row);
    *pc = (struct embed_pieces)EMBED_PIECES_INIT;
}

int embed_train_pieces(const struct embed_corpus *c, const struct embed_params *p, const struct embed_pieces *pc,
                       float *vec, float *pvec, const unsigned char *known, embed_progress_fn progress, void *ud,
                       struct err *e)
{
    return train(c, p, pc, vec, pvec, known, progress, ud, e);
}
