/* vecpack.c -- import a text vector file into a packed store (vecset.h).
 *
 * The text form: a token, then D numbers, per line; spaces or tabs between;
 * an optional first line "COUNT DIM"; CRLF tolerated; blank lines skipped.
 * The input is mapped (or, for a pipe, read whole) and cut at line
 * boundaries into chunks of about a megabyte.  Each thread takes the next
 * chunk, parses it into a buffer of its own (numbers through fparse.h,
 * tokens through text_normalize_token, and each row's norm and token hash,
 * which depend on nothing else), and then hands over to the writer every
 * parsed chunk that is next in file order, unless another thread is doing
 * so.  The writer (first-wins dedupe, fingerprint, output) thus sees the
 * rows in file order, so the output and the first error reported are the
 * same for any thread count, while the other threads go on parsing.
 * It does not know the binary layout; see vecset.c.
 */
#include "vecsift/vecset.h"

#include <errno.h>
#include <fcntl.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>

#include "vecsift/err.h"
#include "vecsift/fparse.h"
#include "vecsift/text.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"

#define CHUNK_BYTES (1u << 20)

/* ---- reading the whole input ---- */

struct input {
    const char *p;  /* the bytes */
    size_t len;
    void *map;      /* when mapped */
    char *buf;      /* when read */
};

static int input_open(struct input *in, const char *path, struct err *e)
{
    memset(in, 0, sizeof *in);
    int fd = strcmp(path, "-") == 0 ? 0 : open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0)
        return err_io(e, path, 0, "cannot open: %s", strerror(errno));
    struct stat st;
    if (fstat(fd, &st) == 0 && S_ISREG(st.st_mode) && st.st_size > 0) {
        in->map = mmap(NULL, (size_t)st.st_size, PROT_READ, MAP_PRIVATE, fd, 0);
        if (in->map != MAP_FAILED) {
            posix_madvise(in->map, (size_t)st.st_size, POSIX_MADV_SEQUENTIAL);
            in->p = in->map;
            in->len = (size_t)st.st_size;
            if (fd)
                close(fd);
            return 0;
        }
        in->map = NULL;
    }
    size_t cap = 0;
    for (;;) {
        if (in->len == cap)
            in->buf = xgrow(in->buf, &cap, in->len + (1 << 20), 1);
        ssize_t r = read(fd, in->buf + in->len, cap - in->len);
        if (r == 0)
            break;
        if (r < 0) {
            if (errno == EINTR)
                continue;
            if (fd)
                close(fd);
            return err_io(e, path, 0, "cannot read: %s", strerror(errno));
        }
        in->len += (size_t)r;
    }
    if (fd)
        close(fd);
    in->p = in->buf;
    return 0;
}

static void input_close(struct input *in)
{
    if (in->map)
        munmap(in->map, in->len);
    free(in->buf);
}

/* ---- one line ---- */

static int is_ws(char c)
{
    return c == ' ' || c == '\t';
}

/* End of the line starting at p (the '\n' or 'end'). */
static const char *line_end(const char *p, const char *end)
{
    const char *nl = memchr(p, '\n', (size_t)(end - p));
    return nl ? nl : end;
}

/* Trim trailing CR, spaces and tabs. */
static const char *trim(const char *p, const char *le)
{
    while (le > p && (le[-1] == '\r' || is_ws(le[-1])))
        le--;
    return le;
}

static size_t count_fields(const char *p, const char *le)
{
    size_t n = 0;
    while (p < le) {
        while (p < le && is_ws(*p))
            p++;
        if (p == le)
            break;
        n++;
        while (p < le && !is_ws(*p))
            p++;
    }
    return n;
}

/* Is s[0..len) an unsigned decimal integer? */
static int is_uint(const char *s, size_t len, unsigned long long *out)
{
    if (len == 0 || len > 18)
        return 0;
    unsigned long long v = 0;
    for (size_t i = 0; i < len; i++) {
        if ((unsigned)(s[i] - '0') >= 10)
            return 0;
        v = v * 10 + (unsigned)(s[i] - '0');
    }
    *out = v;
    return 1;
}

/* ---- a chunk: parsed by one thread ---- */

struct chunk {
    const char *p, *end;        /* the lines */
    const struct text_options *to;
    size_t dim;
    size_t lines;               /* lines in the chunk (parsed so far on error) */
    size_t rows;                /* entries parsed */
    float *vals;                /* (rows, dim) */
    size_t vcap;
    float *norms;               /* (rows) vecset_row_norm of each */
    uint64_t *hashes;           /* (rows) vocab_hash of each token */
    size_t hcap;
    char *toks;                 /* normalised tokens, NUL-terminated, back to back; */
    size_t tlen, tcap;          /* an unusable entry has the empty string */
    struct err err;             /* first error: msg without the file and line */
    size_t err_line;            /* its line within the chunk (1-based) */
};

static void chunk_release(struct chunk *c)
{
    free(c->vals);
    free(c->norms);
    free(c->hashes);
    free(c->toks);
    c->vals = c->norms = NULL;
    c->hashes = NULL;
    c->toks = NULL;
    c->vcap = c->hcap = c->tcap = 0;
}

/* Tokens of lowercase ASCII letters and digits come out of the text
 * pipeline unchanged (NFKC, case folding and mark removal leave them alone,
 * and they hold no '@' or "://" to mask), unless they are all digits and
 * numbers are masked.  tests/test_vecset.c checks this against
 * text_normalize_token. */
static int plain_token(const char *s, size_t len, const struct text_options *to)
{
    int letter = 0;
    for (size_t i = 0; i < len; i++) {
        unsigned char c = (unsigned char)s[i];
        if ((unsigned)(c - (unsigned char)'a') < 26u)
            letter = 1;
        else if ((unsigned)(c - (unsigned char)'0') >= 10u)
            return 0;
    }
    return letter || !to->mask_number;
}

static void add_token(struct chunk *c, const char *s, size_t len)
{
    if (c->tlen + len + 1 > c->tcap)
        c->toks = xgrow(c->toks, &c->tcap, c->tlen + len + 1, 1);
    memcpy(c->toks + c->tlen, s, len);
    c->toks[c->tlen + len] = '\0';
    c->tlen += len + 1;
}

/* The first field starting at p, for messages: at most 40 bytes. */
static int field_len(const char *p, const char *le)
{
    const char *q = p;
    while (q < le && !is_ws(*q))
        q++;
    return (int)(q - p > 40 ? 40 : q - p);
}

static int not_finite_word(const char *p, int n)
{
    if (n > 0 && (*p == '-' || *p == '+'))
        p++, n--;
    static const char *const words[] = { "nan", "inf", "infinity" };
    for (size_t i = 0; i < 3; i++)
        if ((size_t)n == strlen(words[i]) && strncasecmp(p, words[i], (size_t)n) == 0)
            return 1;
    return 0;
}

/* Why the number starting at p (the j-th, 0-based) could not be read. */
static int bad_number(struct chunk *c, const char *p, const char *le, size_t j)
{
    int n = field_len(p, le);
    float f;
    const char *stop;
    if (fparse_f32(p, le, &f, &stop) == FPARSE_RANGE && (stop == le || is_ws(*stop)))
        return err_set(&c->err, NULL, 0, "number %zu, '%.*s', is too large for a 32-bit float", j + 1, n, p);
    if (not_finite_word(p, n))
        return err_set(&c->err, NULL, 0, "number %zu is '%.*s'; vector values must be finite", j + 1, n, p);
    return err_set(&c->err, NULL, 0, "number %zu, '%.*s', is not a number", j + 1, n, p);
}

static int parse_line(struct chunk *c, const char *p, const char *le)
{
    while (p < le && is_ws(*p))
        p++;
    const char *t = p;
    while (p < le && !is_ws(*p))
        p++;
    size_t tl = (size_t)(p - t);
    size_t tok_at = c->tlen;
    if (plain_token(t, tl, c->to)) {
        add_token(c, t, tl);
    } else {
        char *n = text_normalize_token(t, tl, c->to);
        add_token(c, n ? n : "", n ? strlen(n) : 0);
        free(n);
    }
    if (c->rows + 1 > c->vcap / (c->dim ? c->dim : 1)) {
        size_t need = xmul(c->rows + 1, c->dim);
        c->vals = xgrow(c->vals, &c->vcap, need, sizeof(float));
    }
    if (c->rows + 1 > c->hcap) {
        size_t cap = c->hcap;
        c->norms = xgrow(c->norms, &cap, c->rows + 1, sizeof *c->norms);
        cap = c->hcap;
        c->hashes = xgrow(c->hashes, &cap, c->rows + 1, sizeof *c->hashes);
        c->hcap = cap;
    }
    float *out = c->vals + c->rows * c->dim;
    const char *stop;
    size_t got = fparse_f32_row(p, le, out, c->dim, &stop);
    p = stop;
    while (p < le && is_ws(*p))
        p++;
    if (got < c->dim) {
        if (p == le)
            return err_set(&c->err, NULL, 0, "line has %zu numbers after the token, expected %zu", got, c->dim);
        return bad_number(c, p, le, got);
    }
    if (p < le)
        return err_set(&c->err, NULL, 0, "line has %zu numbers after the token, expected %zu",
                       c->dim + count_fields(p, le), c->dim);
    c->norms[c->rows] = vecset_row_norm(out, c->dim);
    c->hashes[c->rows] = vocab_hash(c->toks + tok_at, c->tlen - tok_at - 1);
    c->rows++;
    return 0;
}

static void chunk_parse(struct chunk *c)
{
    c->lines = c->rows = c->tlen = 0;
    memset(&c->err, 0, sizeof c->err);
    c->err_line = 0;
    for (const char *p = c->p; p < c->end;) {
        const char *nl = line_end(p, c->end);
        const char *le = trim(p, nl);
        c->lines++;
        const char *q = p;
        while (q < le && is_ws(*q))
            q++;
        if (q < le && parse_line(c, q, le) < 0) {
            c->err_line = c->lines;
            return;
        }
        p = nl < c->end ? nl + 1 : nl;
    }
}

/* ---- the import ---- */

/* The chunks of one import, taken by the threads in file order and handed
 * to the writer in the same order.  Chunk k is parsed into slot k % nslot;
 * a thread wanting chunk k waits while slot k % nslot still holds chunk
 * k - nslot, not yet handed over, so memory stays at nslot chunks. */
struct pipeline {
    pthread_mutex_t mu;
    pthread_cond_t cv;
    const char *next, *end;     /* the text not yet taken */
    size_t taken, handed;       /* chunks taken by a thread / handed to the writer */
    int writing;                /* a thread is handing over */
    int stop;                   /* an error was handed over: take no more */
    struct chunk *slot;         /* (nslot) */
    int *ready;                 /* (nslot) parsed, waiting for its turn */
    size_t nslot;
    /* the writer's side: touched only by the thread handing over */
    vecset_writer *w;
    struct vecset_pack_stats *st;
    size_t line;                /* lines before the chunk handed next */
    size_t entries;
    struct err err;             /* the first error in file order, as in the chunk */
    size_t err_line;            /* its line in the file */
};

/* Hand one parsed chunk to the writer.  Returns -1 at its error. */
static int hand_over(struct pipeline *pl, struct chunk *c)
{
    const char *tok = c->toks;
    for (size_t r = 0; r < c->rows; r++) {
        size_t tl = strlen(tok);
        if (tl == 0)
            pl->st->unusable++;
        else if (!vecset_writer_add_prepared(pl->w, tok, tl, c->hashes[r], c->norms[r], c->vals + r * c->dim))
            pl->st->merged++;
        tok += tl + 1;
    }
    pl->entries += c->rows;
    if (c->err.code) {
        pl->err = c->err;
        pl->err_line = pl->line + c->err_line;
        return -1;
    }
    pl->line += c->lines;
    return 0;
}

static void *pipeline_run(void *arg)
{
    struct pipeline *pl = arg;
    pthread_mutex_lock(&pl->mu);
    while (!pl->stop && pl->next < pl->end) {
        size_t k = pl->taken;
        if (k >= pl->handed + pl->nslot) {
            pthread_cond_wait(&pl->cv, &pl->mu);
            continue;
        }
        struct chunk *c = &pl->slot[k % pl->nslot];
        c->p = pl->next;
        if ((size_t)(pl->end - pl->next) <= CHUNK_BYTES) {
            c->end = pl->end;
        } else {
            const char *q = pl->next + CHUNK_BYTES;
            const char *nl = memchr(q, '\n', (size_t)(pl->end - q));
            c->end = nl ? nl + 1 : pl->end;
        }
        pl->next = c->end;
        pl->taken++;
        pthread_mutex_unlock(&pl->mu);
        chunk_parse(c);
        pthread_mutex_lock(&pl->mu);
        pl->ready[k % pl->nslot] = 1;
        if (pl->writing)
            continue; /* the thread handing over will take this one in its turn */
        pl->writing = 1;
        while (!pl->stop && pl->ready[pl->handed % pl->nslot]) {
            struct chunk *h = &pl->slot[pl->handed % pl->nslot];
            pthread_mutex_unlock(&pl->mu);
            int rc = hand_over(pl, h);
            pthread_mutex_lock(&pl->mu);
            pl->ready[pl->handed % pl->nslot] = 0;
            pl->handed++;
            pl->stop |= rc < 0;
            pthread_cond_broadcast(&pl->cv);
        }
        pl->writing = 0;
    }
    pthread_mutex_unlock(&pl->mu);
    return NULL;
}

int vecset_pack_text(const char *in, const char *out, const struct text_options *to, int threads,
                     struct vecset_pack_stats *st, struct err *e)
{
    struct input src;
    struct chunk *ch = NULL;
    pthread_t *tid = NULL;
    vecset_writer *w = NULL;
    const char *name = strcmp(in, "-") == 0 ? "<stdin>" : in;
    size_t nt = threads < 1 ? 1 : threads > 64 ? 64 : (size_t)threads;
    int rc = -1;
    memset(st, 0, sizeof *st);
    if (input_open(&src, in, e) < 0)
        return -1;
    const char *p = src.p, *end = src.p + src.len;
    size_t line = 0;
    if (src.len >= 3 && memcmp(p, "\xEF\xBB\xBF", 3) == 0)
        p += 3; /* a UTF-8 byte-order mark, as some editors write */

    /* the first non-blank line: header or first entry */
    const char *first = NULL, *first_le = NULL;
    while (p < end) {
        const char *nl = line_end(p, end);
        const char *le = trim(p, nl);
        line++;
        const char *q = p;
        while (q < le && is_ws(*q))
            q++;
        p = nl < end ? nl + 1 : nl;
        if (q < le) {
            first = q;
            first_le = le;
            break;
        }
    }
    if (!first) {
        err_set(e, name, 0, "empty file: no vectors in it");
        goto out;
    }
    unsigned long long hcount = 0, hdim = 0;
    int has_header = 0;
    size_t first_line = line;
    if (count_fields(first, first_le) == 2) {
        const char *a = first, *ae = a;
        while (!is_ws(*ae))
            ae++;
        const char *b = ae;
        while (is_ws(*b))
            b++;
        has_header = is_uint(a, (size_t)(ae - a), &hcount) && is_uint(b, (size_t)(first_le - b), &hdim);
    }
    size_t dim;
    if (has_header) {
        if (hdim == 0 || hdim > 1000000) {
            err_set(e, name, (long)first_line, "header line gives dimension %llu; it must be 1 to 1000000", hdim);
            goto out;
        }
        dim = (size_t)hdim;
    } else {
        size_t nf = count_fields(first, first_le);
        if (nf < 2) {
            err_set(e, name, (long)first_line, "line has a token but no numbers");
            goto out;
        }
        dim = nf - 1;
        /* Checked here too (the writer checks again) so that the message
         * names the input line, not the output file. */
        if (dim > 1000000) {
            err_set(e, name, (long)first_line, "line has %zu numbers; a vector may have 1 to 1000000", dim);
            goto out;
        }
        p = first;          /* the first line is an entry: parse it with the rest */
        line = first_line - 1;
    }
    if (!(w = vecset_writer_new(out, dim, e)))
        goto out;
    st->lines = line;

    struct pipeline pl = { .next = p, .end = end, .nslot = 2 * nt, .w = w, .st = st, .line = line };
    pthread_mutex_init(&pl.mu, NULL);
    pthread_cond_init(&pl.cv, NULL);
    pl.slot = ch = xcalloc(pl.nslot, sizeof *ch);
    pl.ready = xcalloc(pl.nslot, sizeof *pl.ready);
    for (size_t i = 0; i < pl.nslot; i++) {
        ch[i].to = to;
        ch[i].dim = dim;
    }
    tid = xcalloc(nt, sizeof *tid);
    int *started = xcalloc(nt, sizeof *started);
    for (size_t i = 1; i < nt; i++)
        started[i] = pthread_create(&tid[i], NULL, pipeline_run, &pl) == 0;
    pipeline_run(&pl); /* this thread too; it alone does all when no thread could be had */
    for (size_t i = 1; i < nt; i++)
        if (started[i])
            pthread_join(tid[i], NULL);
    free(started);
    free(pl.ready);
    pthread_cond_destroy(&pl.cv);
    pthread_mutex_destroy(&pl.mu);
    line = pl.line;
    size_t entries = pl.entries;
    if (pl.err.code) {
        err_set(e, name, (long)pl.err_line, "%s", pl.err.msg);
        if (has_header && strstr(pl.err.msg, "numbers after the token"))
            err_hint(e, "the header line (line %zu) says %zu numbers per line", first_line, dim);
        goto out;
    }
    st->lines = line;
    if (entries == 0) {
        err_set(e, name, 0, "empty file: a header line but no vectors");
        goto out;
    }
    if (has_header && entries != hcount) {
        err_set(e, name, (long)first_line, "header line says %llu vectors but the file has %zu", hcount, entries);
        goto out;
    }
    if (vecset_writer_count(w) == 0) {
        err_set(e, name, 0, "none of the %zu tokens is a single token after normalisation", entries);
        goto out;
    }
    st->rows = vecset_writer_count(w);
    rc = vecset_writer_commit(w, e);
    w = NULL;
out:
    if (ch)
        for (size_t i = 0; i < 2 * nt; i++)
            chunk_release(&ch[i]);
    free(ch);
    free(tid);
    vecset_writer_abort(w);
    input_close(&src);
    return rc;
}
