/* vecset.c -- packed vector sets (.vecs): write, open by mmap, look up,
 * nearest neighbours, export to text.
 *
 * The file layout is documented field by field in docs/vecs-format.md; the
 * constants below are the single source of it in code.  Open checks every
 * header field against the file length and the other sections, and touches
 * no row and no string: a store of a million rows opens as fast as one of
 * ten.  Lookups go through the stored hash index and bounds-check every
 * entry they read, so a damaged file gives "not found", never a crash.
 * Importing the text form lives in vecpack.c; tokenising in text.c.
 */
#include "vecsift/vecset.h"

#include <assert.h>
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>

#include "vecsift/err.h"
#include "vecsift/ofile.h"
#include "vecsift/pieces.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"

#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ != __ORDER_LITTLE_ENDIAN__
#error "the .vecs reader maps the file directly and needs a little-endian host"
#endif

/* ---- format ---- */

static const char MAGIC[8] = { 'v', 's', 'f', 't', 'V', 'E', 'C', '\n' };
enum {
    VERSION_MAJOR = 1,  /* readers refuse a higher major version */
    VERSION_MINOR = 0,  /* a higher minor only adds header fields after byte 128 */
    HEADER_SIZE = 128,
    ROW_ALIGN = 64,
    PIECES_MINOR = 1,   /* 1.1: the pieces fields after byte 128 */
    PIECES_HEADER_SIZE = 192
};
#define MAX_DIM 1000000u
#define MAX_COUNT 0xfffffffeu /* index entries are u32 row+1 */

/* The 128-byte header, as stored (little-endian, no padding). */
struct header {
    char magic[8];
    uint32_t major, minor;
    uint32_t header_size, flags;
    uint64_t count, dim, fingerprint;
    uint64_t rows_off, rows_size;       /* count*dim float32, 64-aligned */
    uint64_t norms_off, norms_size;     /* count float32 */
    uint64_t stroff_off, stroff_size;   /* count+1 uint64 into the strings */
    uint64_t strings_off, strings_size; /* NUL-terminated tokens */
    uint64_t index_off, index_size;     /* power-of-two u32 slots, row+1 or 0 */
};
_Static_assert(sizeof(struct header) == HEADER_SIZE, "header layout");

/* Format 1.1: the header's bytes 128..192 when the store keeps pieces
 * (character n-gram rows, pieces.h).  Written only then: a store without
 * pieces stays 1.0, byte for byte as before. */
struct pieces_header {
    uint32_t min_len, max_len;          /* piece lengths in characters */
    uint64_t buckets;                   /* K: pieces hash into [0, K) */
    uint64_t count;                     /* P: bucket rows kept, at most K */
    uint64_t prows_off, prows_size;     /* P*dim float32, 64-aligned */
    uint64_t pids_off, pids_size;       /* P uint32 bucket ids, ascending */
    uint64_t reserved;                  /* 0 */
};
_Static_assert(sizeof(struct pieces_header) == PIECES_HEADER_SIZE - HEADER_SIZE, "pieces header layout");

/* ---- fingerprint ---- */

/* FNV-1a 64 (Fowler, Noll, Vo), over bytes for tokens, and over whole words
 * for the rest: dim as two 32-bit words, float bits two at a time as one
 * 64-bit word (one multiply per two floats instead of eight).
 * Not cryptographic: it tells sets apart, it does not resist forgery. */
#define FNV_BASIS 0xcbf29ce484222325ULL
#define FNV_PRIME 0x100000001b3ULL

static uint64_t fp_word(uint64_t h, uint32_t x)
{
    return (h ^ x) * FNV_PRIME;
}

static uint64_t fp_start(uint64_t dim)
{
    return fp_word(fp_word(FNV_BASIS, (uint32_t)dim), (uint32_t)(dim >> 32));
}

static uint64_t fp_row(uint64_t h, const char *tok, size_t len, const float *row, size_t dim)
{
    for (size_t i = 0; i < len; i++)
        h = (h ^ (unsigned char)tok[i]) * FNV_PRIME;
    h = (h ^ 0) * FNV_PRIME; /* the token's terminating NUL */
    /* floats in pairs, as one little-endian 64-bit word: half the multiply
     * chain; an odd last float alone */
    const unsigned char *b = (const unsigned char *)row;
    size_t j = 0;
    for (; j + 2 <= dim; j += 2) {
        uint64_t x;
        memcpy(&x, b + 4 * j, 8);
        h = (h ^ x) * FNV_PRIME;
    }
    if (j < dim) {
        uint32_t x;
        memcpy(&x, b + 4 * j, 4);
        h = fp_word(h, x);
    }
    return h;
}

/* The pieces after the rows: lengths and K as 32-bit words (K low, then
 * high), then each bucket id followed by its row's floats, as fp_row does
 * after a token. */
static uint64_t fp_pieces_start(uint64_t h, uint32_t min_len, uint32_t max_len, uint64_t buckets)
{
    h = fp_word(fp_word(h, min_len), max_len);
    return fp_word(fp_word(h, (uint32_t)buckets), (uint32_t)(buckets >> 32));
}

static uint64_t fp_piece(uint64_t h, uint32_t id, const float *row, size_t dim)
{
    return fp_row(fp_word(h, id), "", 0, row, dim);
}

void vecset_fingerprint_hex(uint64_t fp, char out[17])
{
    snprintf(out, 17, "%016llx", (unsigned long long)fp);
}

static double row_norm(const float *row, size_t dim)
{
    double s[4] = { 0, 0, 0, 0 }; /* four chains: the adds overlap */
    size_t j = 0;
    for (; j + 4 <= dim; j += 4)
        for (int k = 0; k < 4; k++)
            s[k] += (double)row[j + k] * row[j + k];
    for (; j < dim; j++)
        s[0] += (double)row[j] * row[j];
    return sqrt((s[0] + s[1]) + (s[2] + s[3]));
}

/* ---- writing ---- */

struct vecset_writer {
    ofile *of;
    FILE *fp;
    char *iobuf;
    size_t dim, n;
    uint64_t fp_hash;
    float *norms;           /* (n) */
    size_t ncap;
    uint64_t *hashes;       /* (n) vocab_hash of each token, for rehashing */
    uint64_t *stroff;       /* (n+1) */
    char *strings;
    size_t slen, scap;
    uint64_t *slots;        /* (nslots) row+1 or 0 in the low half, the hash's high half */
    size_t nslots;          /* above it, so most probes need no other memory */
    const struct vecset_pieces *pieces; /* borrowed, written at commit; NULL for none */
    size_t hsize;           /* header bytes before the rows */
};

#define HASH_HIGH 0xffffffff00000000ULL

static void index_put(uint64_t *slots, size_t nslots, uint64_t h, uint32_t row)
{
    size_t i = (size_t)h & (nslots - 1);
    while (slots[i])
        i = (i + 1) & (nslots - 1);
    slots[i] = (h & HASH_HIGH) | ((uint64_t)row + 1);
}

/* A writer whose rows start after a header of 'hsize' bytes (a multiple
 * of 64): HEADER_SIZE, or PIECES_HEADER_SIZE for a store with pieces. */
static vecset_writer *writer_new(const char *out, size_t dim, size_t hsize, struct err *e)
{
    if (strcmp(out, "-") == 0) {
        err_set(e, NULL, 0, "a packed store cannot be written to standard output");
        err_hint(e, "give a file name with -o");
        return NULL;
    }
    if (dim == 0 || dim > MAX_DIM) {
        err_set(e, out, 0, "dimension %zu is out of range (1 to %u)", dim, MAX_DIM);
        return NULL;
    }
    ofile *of = ofile_open(out, e);
    if (!of)
        return NULL;
    vecset_writer *w = xcalloc(1, sizeof *w);
    w->of = of;
    w->fp = ofile_fp(of);
    w->iobuf = xmalloc(1 << 20);
    setvbuf(w->fp, w->iobuf, _IOFBF, 1 << 20);
    w->dim = dim;
    w->fp_hash = fp_start(dim);
    w->nslots = 16;
    w->slots = xcalloc(w->nslots, sizeof *w->slots);
    w->stroff = xcalloc(1, sizeof *w->stroff);
    /* the header is rewritten at commit; rows start right after it (64-aligned) */
    char zero[PIECES_HEADER_SIZE] = { 0 };
    fwrite(zero, 1, hsize, w->fp);
    w->hsize = hsize;
    return w;
}

vecset_writer *vecset_writer_new(const char *out, size_t dim, struct err *e)
{
    return writer_new(out, dim, HEADER_SIZE, e);
}

size_t vecset_writer_count(const vecset_writer *w)
{
    return w->n;
}

static long writer_find(const vecset_writer *w, const char *tok, size_t len, uint64_t h)
{
    size_t i = (size_t)h & (w->nslots - 1);
    for (uint64_t s; (s = w->slots[i]) != 0; i = (i + 1) & (w->nslots - 1)) {
        size_t r = (uint32_t)s - 1;
        if (((s ^ h) & HASH_HIGH) == 0 && w->stroff[r + 1] - w->stroff[r] == len + 1 &&
            memcmp(w->strings + w->stroff[r], tok, len) == 0)
            return (long)r;
    }
    return -1;
}

float vecset_row_norm(const float *row, size_t dim)
{
    return (float)row_norm(row, dim);
}

int vecset_writer_add(vecset_writer *w, const char *tok, size_t len, const float *row)
{
    return vecset_writer_add_prepared(w, tok, len, vocab_hash(tok, len), vecset_row_norm(row, w->dim), row);
}

int vecset_writer_add_prepared(vecset_writer *w, const char *tok, size_t len, uint64_t h, float norm,
                               const float *row)
{
    if (w->n > 0 && writer_find(w, tok, len, h) >= 0)
        return 0;
    if (w->n >= MAX_COUNT)
        return 0; /* NEEDSWORK: over 4 billion rows; the u32 index cannot say so yet */
    if (2 * (w->n + 1) > w->nslots) {
        free(w->slots);
        w->nslots *= 2;
        w->slots = xcalloc(w->nslots, sizeof *w->slots);
        for (size_t r = 0; r < w->n; r++)
            index_put(w->slots, w->nslots, w->hashes[r], (uint32_t)r);
    }
    if (w->n + 1 >= w->ncap) {
        size_t cap = w->ncap;
        w->norms = xgrow(w->norms, &cap, w->n + 2, sizeof *w->norms);
        cap = w->ncap;
        w->hashes = xgrow(w->hashes, &cap, w->n + 2, sizeof *w->hashes);
        cap = w->ncap;
        w->stroff = xgrow(w->stroff, &cap, w->n + 2, sizeof *w->stroff);
        w->ncap = cap;
    }
    if (w->slen + len + 1 > w->scap)
        w->strings = xgrow(w->strings, &w->scap, w->slen + len + 1, 1);
    memcpy(w->strings + w->slen, tok, len);
    w->strings[w->slen + len] = '\0';
    w->slen += len + 1;
    w->stroff[w->n + 1] = w->slen;
    w->hashes[w->n] = h;
    w->norms[w->n] = norm;
    index_put(w->slots, w->nslots, h, (uint32_t)w->n);
    w->fp_hash = fp_row(w->fp_hash, tok, len, row, w->dim);
    fwrite(row, sizeof(float), w->dim, w->fp);
    w->n++;
    return 1;
}

static void pad_to(FILE *fp, uint64_t *pos, uint64_t align)
{
    static const char zero[64];
    uint64_t pad = (align - *pos % align) % align;
    fwrite(zero, 1, (size_t)pad, fp);
    *pos += pad;
}

int vecset_writer_commit(vecset_writer *w, struct err *e)
{
    struct header h;
    memset(&h, 0, sizeof h);
    memcpy(h.magic, MAGIC, sizeof MAGIC);
    h.major = VERSION_MAJOR;
    h.minor = w->pieces ? PIECES_MINOR : VERSION_MINOR;
    h.header_size = (uint32_t)w->hsize;
    h.count = w->n;
    h.dim = w->dim;
    h.fingerprint = w->fp_hash;
    uint64_t pos = h.header_size;
    h.rows_off = pos;
    h.rows_size = (uint64_t)w->n * w->dim * sizeof(float);
    pos += h.rows_size;
    h.norms_off = pos;
    h.norms_size = (uint64_t)w->n * sizeof(float);
    fwrite(w->norms, sizeof(float), w->n, w->fp);
    pos += h.norms_size;
    pad_to(w->fp, &pos, 8);
    h.stroff_off = pos;
    h.stroff_size = ((uint64_t)w->n + 1) * sizeof(uint64_t);
    fwrite(w->stroff, sizeof(uint64_t), w->n + 1, w->fp);
    pos += h.stroff_size;
    h.strings_off = pos;
    h.strings_size = w->slen;
    fwrite(w->strings, 1, w->slen, w->fp);
    pos += w->slen;
    pad_to(w->fp, &pos, 8);
    h.index_off = pos;
    h.index_size = (uint64_t)w->nslots * sizeof(uint32_t);
    /* the stored slots are the low halves: packed to u32 in place, front
     * to back (slot i's four bytes lie at or below slot i's own) */
    unsigned char *packed = (unsigned char *)w->slots;
    for (size_t i = 0; i < w->nslots; i++) {
        uint32_t row1 = (uint32_t)w->slots[i];
        memcpy(packed + 4 * i, &row1, 4);
    }
    fwrite(packed, sizeof(uint32_t), w->nslots, w->fp);
    pos += h.index_size;
    struct pieces_header ph;
    memset(&ph, 0, sizeof ph);
    if (w->pieces) {
        const struct vecset_pieces *pc = w->pieces;
        ph.min_len = pc->p.min_len;
        ph.max_len = pc->p.max_len;
        ph.buckets = pc->p.buckets;
        ph.count = pc->count;
        pad_to(w->fp, &pos, ROW_ALIGN);
        ph.prows_off = pos;
        ph.prows_size = (uint64_t)pc->count * w->dim * sizeof(float);
        fwrite(pc->rows, sizeof(float), pc->count * w->dim, w->fp);
        pos += ph.prows_size;
        ph.pids_off = pos;
        ph.pids_size = (uint64_t)pc->count * sizeof(uint32_t);
        fwrite(pc->bucket, sizeof(uint32_t), pc->count, w->fp);
        pos += ph.pids_size;
        uint64_t fp = fp_pieces_start(w->fp_hash, ph.min_len, ph.max_len, ph.buckets);
        for (size_t i = 0; i < pc->count; i++)
            fp = fp_piece(fp, pc->bucket[i], pc->rows + i * w->dim, w->dim);
        h.fingerprint = fp;
    }
    int rc = 0;
    if (fseek(w->fp, 0, SEEK_SET) != 0 || fwrite(&h, sizeof h, 1, w->fp) != 1 ||
        (w->pieces && fwrite(&ph, sizeof ph, 1, w->fp) != 1)) {
        rc = err_io(e, ofile_path(w->of), 0, "write failed: %s", strerror(errno ? errno : EIO));
        ofile_abort(w->of);
    } else {
        rc = ofile_commit(w->of, e);
    }
    w->of = NULL;
    vecset_writer_abort(w);
    return rc;
}

void vecset_writer_abort(vecset_writer *w)
{
    if (!w)
        return;
    ofile_abort(w->of);
    free(w->iobuf);
    free(w->norms);
    free(w->hashes);
    free(w->stroff);
    free(w->strings);
    free(w->slots);
    free(w);
}

int vecset_write(const char *out, const char *const *words, const float *rows, size_t n, size_t dim,
                 struct err *e)
{
    return vecset_write_pieces(out, words, rows, n, dim, NULL, e);
}

int vecset_write_pieces(const char *out, const char *const *words, const float *rows, size_t n, size_t dim,
                        const struct vecset_pieces *pieces, struct err *e)
{
    if (pieces) {
        const struct pieces_params *pp = &pieces->p;
        /* what a reader accepts (check_pieces), asserted: the caller's values */
        assert(pp->min_len >= 1 && pp->min_len <= pp->max_len && pp->max_len <= PIECES_LONGEST);
        assert(pp->buckets >= 1 && pieces->count <= pp->buckets);
        for (size_t i = 0; i + 1 < pieces->count; i++)
            assert(pieces->bucket[i] < pieces->bucket[i + 1]);
        assert(pieces->count == 0 || pieces->bucket[pieces->count - 1] < pp->buckets);
    }
    vecset_writer *w = writer_new(out, dim, pieces ? PIECES_HEADER_SIZE : HEADER_SIZE, e);
    if (!w)
        return -1;
    w->pieces = pieces;
    for (size_t i = 0; i < n; i++)
        if (!vecset_writer_add(w, words[i], strlen(words[i]), rows + i * dim)) {
            vecset_writer_abort(w);
            return err_set(e, out, 0, "token '%s' appears twice", words[i]);
        }
    return vecset_writer_commit(w, e);
}

/* ---- open and look up ---- */

struct vecset {
    char *path;
    void *map;
    size_t len;
    struct header h;
    const float *rows;      /* (count, dim) */
    const float *norms;     /* (count) */
    const uint64_t *stroff; /* (count+1) */
    const char *strings;    /* strings_size bytes, the last one NUL */
    const uint32_t *slots;  /* (nslots) */
    size_t nslots;
    /* pieces (format 1.1), or ph.count == 0 and no_pieces set */
    struct pieces_header ph;
    int has_pieces;
    struct pieces_params pp;
    const float *prows;     /* (P, dim) */
    const uint32_t *pids;   /* (P) ascending bucket ids */
};

/* Does [off, off+size) lie inside the file, after the header? */
static int within(uint64_t off, uint64_t size, uint64_t hsize, uint64_t len)
{
    return off >= hsize && off <= len && size <= len - off;
}

static int overlap(uint64_t a, uint64_t as, uint64_t b, uint64_t bs)
{
    return as && bs && a < b + bs && b < a + as;
}

/* One section of the header: its size is what the counts imply, it lies
 * inside the file after the header, and it is aligned.  'hint' names what
 * to do about a cut file. */
static int check_section(const char *name, uint64_t off, uint64_t size, uint64_t want, uint64_t align,
                         uint64_t hsize, uint64_t len, const char *path, const char *hint, struct err *e)
{
    if (size != want)
        return err_set(e, path, 0, "damaged packed store: %s section has %llu bytes, expected %llu", name,
                       (unsigned long long)size, (unsigned long long)want);
    if (!within(off, size, hsize, len)) {
        err_set(e, path, 0, "truncated or damaged packed store: %s section (%llu bytes at %llu) "
                "runs past the end of the file (%llu bytes)", name, (unsigned long long)size,
                (unsigned long long)off, (unsigned long long)len);
        return err_hint(e, "%s", hint);
    }
    if (off % align)
        return err_set(e, path, 0, "damaged packed store: %s section is not %llu-byte aligned", name,
                       (unsigned long long)align);
    return 0;
}

static int check_header(const struct header *h, uint64_t len, const char *path, struct err *e)
{
    if (h->major > VERSION_MAJOR) {
        err_set(e, path, 0, "packed store version %u.%u is newer than this program reads (%d.x)", h->major,
                h->minor, VERSION_MAJOR);
        return err_hint(e, "update vecsift, or export the set to text with the newer version");
    }
    if (h->major == 0 || h->header_size < HEADER_SIZE || h->header_size > len)
        return err_set(e, path, 0, "damaged packed store: header size %u", h->header_size);
    if (h->dim == 0 || h->dim > MAX_DIM || h->count > MAX_COUNT)
        return err_set(e, path, 0, "damaged packed store: %llu rows of dimension %llu",
                       (unsigned long long)h->count, (unsigned long long)h->dim);
    /* count <= 2^32 and dim <= 2^20: these products cannot overflow 64 bits */
    const struct {
        const char *name;
        uint64_t off, size, want, align;
    } sec[5] = {
        { "rows", h->rows_off, h->rows_size, h->count * h->dim * 4, ROW_ALIGN },
        { "norms", h->norms_off, h->norms_size, h->count * 4, 4 },
        { "string offsets", h->stroff_off, h->stroff_size, (h->count + 1) * 8, 8 },
        { "strings", h->strings_off, h->strings_size, h->strings_size, 1 },
        { "index", h->index_off, h->index_size, h->index_size, 4 },
    };
    for (int i = 0; i < 5; i++) {
        if (check_section(sec[i].name, sec[i].off, sec[i].size, sec[i].want, sec[i].align, h->header_size, len,
                          path, "the file may have been cut short while copying; pack it again", e) < 0)
            return -1;
        for (int j = 0; j < i; j++)
            if (overlap(sec[i].off, sec[i].size, sec[j].off, sec[j].size))
                return err_set(e, path, 0, "damaged packed store: %s and %s sections overlap", sec[j].name,
                               sec[i].name);
    }
    uint64_t slots = h->index_size / 4;
    if (slots <= h->count || (slots & (slots - 1)) || h->index_size % 4)
        return err_set(e, path, 0, "damaged packed store: index of %llu slots for %llu rows",
                       (unsigned long long)slots, (unsigned long long)h->count);
    if (h->count && h->strings_size == 0)
        return err_set(e, path, 0, "damaged packed store: empty string table");
    return 0;
}

/* The pieces fields of a 1.1 header, checked as check_header checks the
 * others: sizes from the counts, inside the file, aligned, clear of every
 * other section.  O(1): the ids' order is checked by vecset_verify, and a
 * lookup in a disordered list only finds nothing. */
static int check_pieces(const struct header *h, const struct pieces_header *p, uint64_t len, const char *path,
                        struct err *e)
{
    if (p->min_len < 1 || p->min_len > p->max_len || p->max_len > PIECES_LONGEST)
        return err_set(e, path, 0, "damaged packed store: piece lengths %u to %u (1 to %d expected)", p->min_len,
                       p->max_len, PIECES_LONGEST);
    if (p->buckets < 1 || p->buckets > UINT32_MAX || p->count > p->buckets)
        return err_set(e, path, 0, "damaged packed store: %llu piece rows in %llu buckets",
                       (unsigned long long)p->count, (unsigned long long)p->buckets);
    /* count <= 2^32 and dim <= 2^20: no overflow */
    const struct {
        const char *name;
        uint64_t off, size, want, align;
    } sec[2] = {
        { "piece rows", p->prows_off, p->prows_size, p->count * h->dim * 4, ROW_ALIGN },
        { "piece ids", p->pids_off, p->pids_size, p->count * 4, 4 },
    };
    const uint64_t other[5][2] = {
        { h->rows_off, h->rows_size }, { h->norms_off, h->norms_size }, { h->stroff_off, h->stroff_size },
        { h->strings_off, h->strings_size }, { h->index_off, h->index_size },
    };
    for (int i = 0; i < 2; i++) {
        if (check_section(sec[i].name, sec[i].off, sec[i].size, sec[i].want, sec[i].align, h->header_size, len,
                          path, "the file may have been cut short while copying; learn it again", e) < 0)
            return -1;
        for (int j = 0; j < 5; j++)
            if (overlap(sec[i].off, sec[i].size, other[j][0], other[j][1]))
                return err_set(e, path, 0, "damaged packed store: %s section overlaps another", sec[i].name);
    }
    if (overlap(sec[0].off, sec[0].size, sec[1].off, sec[1].size))
        return err_set(e, path, 0, "damaged packed store: piece rows and piece ids sections overlap");
    return 0;
}

vecset *vecset_open(const char *path, struct err *e)
{
    vecset *v = NULL;
    int fd = open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
        err_io(e, path, 0, "cannot open: %s", strerror(errno));
        return NULL;
    }
    struct stat st;
    if (fstat(fd, &st) != 0) {
        err_io(e, path, 0, "cannot read: %s", strerror(errno));
        goto fail;
    }
    if (!S_ISREG(st.st_mode)) {
        err_set(e, path, 0, "not a regular file; a packed store is opened by mapping it");
        goto fail;
    }
    uint64_t len = (uint64_t)st.st_size;
    struct header h;
    if (len < 8 || pread(fd, h.magic, 8, 0) != 8 || memcmp(h.magic, MAGIC, 8) != 0) {
        err_set(e, path, 0, "not a packed vector store (no .vecs magic at the start)");
        err_hint(e, "a text vector file must first be packed: vecsift vectors pack FILE -o FILE.vecs");
        goto fail;
    }
    if (len < HEADER_SIZE || pread(fd, &h, sizeof h, 0) != (ssize_t)sizeof h) {
        err_set(e, path, 0, "truncated packed store: %llu bytes, shorter than its %d-byte header",
                (unsigned long long)len, HEADER_SIZE);
        goto fail;
    }
    if (check_header(&h, len, path, e) < 0)
        goto fail;
    struct pieces_header ph;
    memset(&ph, 0, sizeof ph);
    int has_pieces = h.major == 1 && h.minor >= PIECES_MINOR && h.header_size >= PIECES_HEADER_SIZE;
    if (has_pieces && (pread(fd, &ph, sizeof ph, HEADER_SIZE) != (ssize_t)sizeof ph ||
                       check_pieces(&h, &ph, len, path, e) < 0)) {
        if (e->code == ERR_OK)
            err_set(e, path, 0, "truncated packed store: cannot read the pieces header");
        goto fail;
    }
    v = xcalloc(1, sizeof *v);
    v->path = xstrdup(path);
    v->h = h;
    v->len = (size_t)len;
    v->map = mmap(NULL, v->len, PROT_READ, MAP_PRIVATE, fd, 0);
    if (v->map == MAP_FAILED) {
        v->map = NULL;
        err_io(e, path, 0, "cannot map: %s", strerror(errno));
        goto fail;
    }
    const char *base = v->map;
    v->rows = (const float *)(const void *)(base + h.rows_off);
    v->norms = (const float *)(const void *)(base + h.norms_off);
    v->stroff = (const uint64_t *)(const void *)(base + h.stroff_off);
    v->strings = base + h.strings_off;
    v->slots = (const uint32_t *)(const void *)(base + h.index_off);
    v->nslots = (size_t)(h.index_size / 4);
    if (has_pieces) {
        v->ph = ph;
        v->has_pieces = 1;
        v->pp = (struct pieces_params){ ph.min_len, ph.max_len, (uint32_t)ph.buckets };
        v->prows = (const float *)(const void *)(base + ph.prows_off);
        v->pids = (const uint32_t *)(const void *)(base + ph.pids_off);
    }
    /* One byte read, not a scan: every string offset below strings_size then
     * names a NUL-terminated string inside the section. */
    if (h.count && v->strings[h.strings_size - 1] != '\0') {
        err_set(e, path, 0, "damaged packed store: string table does not end in NUL");
        goto fail;
    }
    close(fd);
    return v;
fail:
    close(fd);
    vecset_close(v);
    return NULL;
}

void vecset_close(vecset *v)
{
    if (!v)
        return;
    if (v->map)
        munmap(v->map, v->len);
    free(v->path);
    free(v);
}

size_t vecset_count(const vecset *v)
{
    return (size_t)v->h.count;
}

size_t vecset_dim(const vecset *v)
{
    return (size_t)v->h.dim;
}

uint64_t vecset_fingerprint(const vecset *v)
{
    return v->h.fingerprint;
}

const char *vecset_path(const vecset *v)
{
    return v->path;
}

const float *vecset_row(const vecset *v, size_t i)
{
    return i < v->h.count ? v->rows + i * v->h.dim : NULL;
}

float vecset_norm(const vecset *v, size_t i)
{
    return i < v->h.count ? v->norms[i] : 0.0f;
}

const char *vecset_word(const vecset *v, size_t i)
{
    if (i >= v->h.count)
        return "";
    uint64_t off = v->stroff[i];
    return off < v->h.strings_size ? v->strings + off : ""; /* "" for a damaged entry */
}

long vecset_find(const vecset *v, const char *tok)
{
    return vecset_find_hashed(v, tok, vocab_hash(tok, strlen(tok)));
}

long vecset_find_hashed(const vecset *v, const char *tok, uint64_t h)
{
    size_t mask = v->nslots - 1;
    size_t i = (size_t)h & mask;
    for (size_t probes = 0; probes < v->nslots; probes++, i = (i + 1) & mask) {
        uint32_t s = v->slots[i];
        if (s == 0)
            return -1;
        if (s - 1 >= v->h.count)
            continue; /* damaged entry: never trusted */
        if (strcmp(vecset_word(v, s - 1), tok) == 0)
            return (long)(s - 1);
    }
    return -1;
}

/* Rows are not read at open (that keeps open flat: 0.05 ms for a 1M-row,
 * 1.2 GB store, where a scan takes about 0.4 s), so whatever reads a row
 * checks it: every value finite (pack refuses NaN and infinities, so one here
 * is damage) and the stored norm equal to the row's own, up to a relative
 * 1e-5 (the writers store vecset_row_norm's float; the slack only forgives a
 * last-bit difference).  A zero row must have a zero norm. */
int vecset_check_row(const vecset *v, size_t i, struct err *e)
{
    if (i >= v->h.count)
        return err_set(e, v->path, 0, "damaged packed store: row %zu of %llu", i + 1,
                       (unsigned long long)v->h.count);
    size_t dim = (size_t)v->h.dim;
    const float *r = v->rows + i * dim;
    for (size_t j = 0; j < dim; j++)
        if (!isfinite(r[j])) {
            err_set(e, v->path, 0, "damaged packed store: the vector of '%s' (row %zu) holds %s at position %zu",
                    vecset_word(v, i), i + 1, isnan(r[j]) ? "NaN" : "an infinity", j + 1);
            return err_hint(e, "the file changed after it was packed; pack it again from its text form");
        }
    double want = vecset_row_norm(r, dim), got = v->norms[i];
    if (!(fabs(got - want) <= 1e-5 * want)) {
        err_set(e, v->path, 0, "damaged packed store: the stored length of '%s' (row %zu) is %g, its vector's is %g",
                vecset_word(v, i), i + 1, got, want);
        return err_hint(e, "the file changed after it was packed; pack it again from its text form");
    }
    return 0;
}

int vecset_verify(const vecset *v, struct err *e)
{
    uint64_t h = fp_start(v->h.dim);
    for (size_t i = 0; i < v->h.count; i++) {
        uint64_t a = v->stroff[i], b = v->stroff[i + 1];
        if (a >= b || b > v->h.strings_size || v->strings[b - 1] != '\0' || strlen(v->strings + a) != b - a - 1)
            return err_set(e, v->path, 0, "damaged packed store: string entry %zu", i);
        h = fp_row(h, v->strings + a, (size_t)(b - a - 1), vecset_row(v, i), (size_t)v->h.dim);
        if (vecset_check_row(v, i, e) < 0)
            return -1;
    }
    if (v->has_pieces) {
        h = fp_pieces_start(h, v->ph.min_len, v->ph.max_len, v->ph.buckets);
        for (size_t i = 0; i < v->ph.count; i++) {
            if (v->pids[i] >= v->ph.buckets || (i > 0 && v->pids[i] <= v->pids[i - 1]))
                return err_set(e, v->path, 0, "damaged packed store: piece id %zu is out of order", i);
            h = fp_piece(h, v->pids[i], v->prows + i * v->h.dim, (size_t)v->h.dim);
        }
    }
    if (h != v->h.fingerprint) {
        char want[17], got[17];
        vecset_fingerprint_hex(v->h.fingerprint, want);
        vecset_fingerprint_hex(h, got);
        return err_set(e, v->path, 0, "content fingerprint %s does not match the header's %s", got, want);
    }
    return 0;
}

/* ---- pieces ---- */

static void write_numbers(FILE *fp, const float *r, size_t dim);

const struct pieces_params *vecset_pieces(const vecset *v)
{
    return v->has_pieces ? &v->pp : NULL;
}

size_t vecset_piece_count(const vecset *v)
{
    return v->has_pieces ? (size_t)v->ph.count : 0;
}

uint32_t vecset_piece_bucket(const vecset *v, size_t i)
{
    return i < vecset_piece_count(v) ? v->pids[i] : 0;
}

const float *vecset_piece_row(const vecset *v, size_t i)
{
    return i < vecset_piece_count(v) ? v->prows + i * v->h.dim : NULL;
}

long vecset_piece_find(const vecset *v, uint32_t bucket)
{
    size_t lo = 0, hi = vecset_piece_count(v); /* the first id >= bucket */
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (v->pids[mid] < bucket)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo < vecset_piece_count(v) && v->pids[lo] == bucket ? (long)lo : -1;
}

struct compose_sum {
    const vecset *v;
    double *acc;    /* (D) */
    size_t n;       /* pieces held */
    size_t all;     /* pieces */
};

static void add_piece(void *ud, const char *piece, size_t len)
{
    struct compose_sum *s = ud;
    s->all++;
    long r = vecset_piece_find(s->v, pieces_fnv1a32(piece, len) % s->v->pp.buckets);
    if (r < 0)
        return;
    const float *row = s->v->prows + (size_t)r * s->v->h.dim;
    for (size_t d = 0; d < s->v->h.dim; d++)
        s->acc[d] += row[d];
    s->n++;
}

size_t vecset_compose(const vecset *v, const char *tok, size_t len, float *out)
{
    size_t D = (size_t)v->h.dim;
    if (!v->has_pieces || v->ph.count == 0)
        return 0;
    double sacc[512];
    double *acc = D <= 512 ? sacc : xmalloc(xmul(D, sizeof *acc));
    memset(acc, 0, D * sizeof *acc);
    struct compose_sum s = { v, acc, 0, 0 };
    pieces_each(tok, len, v->pp.min_len, v->pp.max_len, add_piece, &s);
    /* a damaged row (inf or NaN: never written) gives no vector, not a
     * NaN that pooling would spread over the whole row */
    for (size_t d = 0; s.n && d < D; d++)
        if (!isfinite(acc[d]))
            s.n = 0;
    if (s.n)
        for (size_t d = 0; d < D; d++)
            out[d] = (float)(acc[d] / (double)s.all);
    if (acc != sacc)
        free(acc);
    return s.n;
}

int vecset_export_pieces(const vecset *v, const char *out, struct err *e)
{
    if (!v->has_pieces)
        return err_set(e, v->path, 0, "the vector set has no pieces to export");
    ofile *of = ofile_open(out, e);
    if (!of)
        return -1;
    FILE *fp = ofile_fp(of);
    size_t dim = (size_t)v->h.dim;
    fprintf(fp, "%llu %zu %u %u %llu\n", (unsigned long long)v->ph.count, dim, v->ph.min_len, v->ph.max_len,
            (unsigned long long)v->ph.buckets);
    for (size_t i = 0; i < v->ph.count; i++) {
        fprintf(fp, "%u", (unsigned)v->pids[i]);
        write_numbers(fp, v->prows + i * dim, dim);
        fputc('\n', fp);
        if (ferror(fp))
            break;
    }
    return ofile_commit(of, e);
}

/* ---- neighbours ---- */

/* Better hit first: higher cosine, then lower row. */
static int better(const struct vecset_hit *a, const struct vecset_hit *b)
{
    return a->cos > b->cos || (a->cos == b->cos && a->row < b->row);
}

/* Insert 'h' into the sorted list hits[0..*n) of capacity k. */
static void keep(struct vecset_hit *hits, size_t *n, size_t k, struct vecset_hit h)
{
    if (*n == k && !better(&h, &hits[k - 1]))
        return;
    size_t i = *n < k ? (*n)++ : k - 1;
    while (i > 0 && better(&h, &hits[i - 1])) {
        hits[i] = hits[i - 1];
        i--;
    }
    hits[i] = h;
}

struct scan {
    const vecset *v;
    const double *q;    /* (D) unit query */
    size_t lo, hi, k;
    const size_t *ex;
    size_t nex;
    struct vecset_hit *hits;
    size_t n;
    size_t bad;         /* 1 + the first damaged row of [lo, hi), or 0 */
};

static int row_is_zero(const float *r, size_t dim)
{
    for (size_t j = 0; j < dim; j++)
        if (r[j] != 0)
            return 0;
    return 1;
}

static void *scan_run(void *arg)
{
    struct scan *s = arg;
    const vecset *v = s->v;
    size_t dim = (size_t)v->h.dim;
    for (size_t i = s->lo; i < s->hi; i++) {
        double nrm = v->norms[i];
        const float *r = v->rows + i * dim;
        if (!(nrm > 0) || isinf(nrm)) {
            if (nrm == 0 && row_is_zero(r, dim))
                continue; /* a zero row never matches; rare, so reading it costs nothing */
            s->bad = i + 1;
            return NULL;
        }
        int skip = 0;
        for (size_t x = 0; x < s->nex; x++)
            skip |= s->ex[x] == i;
        if (skip)
            continue;
        double a0 = 0, a1 = 0, a2 = 0, a3 = 0;
        size_t j = 0;
        for (; j + 4 <= dim; j += 4) {
            a0 += r[j] * s->q[j];
            a1 += r[j + 1] * s->q[j + 1];
            a2 += r[j + 2] * s->q[j + 2];
            a3 += r[j + 3] * s->q[j + 3];
        }
        for (; j < dim; j++)
            a0 += r[j] * s->q[j];
        struct vecset_hit h = { i, (a0 + a1 + a2 + a3) / nrm };
        /* NaN or an infinity in the row, or a stored norm too small for it
         * (Cauchy-Schwarz bounds a true cosine by 1): the store is damaged */
        if (!(fabs(h.cos) <= 1 + 1e-4)) {
            s->bad = i + 1;
            return NULL;
        }
        keep(s->hits, &s->n, s->k, h);
    }
    return NULL;
}

long vecset_nearest(const vecset *v, const float *query, size_t k, const size_t *exclude, size_t nexclude,
                    int threads, struct vecset_hit *hits, struct err *e)
{
    size_t dim = (size_t)v->h.dim, count = (size_t)v->h.count;
    if (k == 0 || count == 0)
        return 0;
    double qn = row_norm(query, dim);
    if (!(qn > 0))
        return 0;
    double *q = xmalloc(dim * sizeof *q);
    for (size_t j = 0; j < dim; j++)
        q[j] = query[j] / qn;
    size_t t = threads < 1 ? 1 : (size_t)threads;
    if (t > count / 1024 + 1)
        t = count / 1024 + 1; /* small stores: threads cost more than they save */
    struct scan *sc = xcalloc(t, sizeof *sc);
    pthread_t *tid = xcalloc(t, sizeof *tid);
    int *started = xcalloc(t, sizeof *started);
    for (size_t i = 0; i < t; i++) {
        sc[i] = (struct scan){ v, q, count * i / t, count * (i + 1) / t, k, exclude, nexclude,
                               xcalloc(k, sizeof(struct vecset_hit)), 0, 0 };
        if (i > 0)
            started[i] = pthread_create(&tid[i], NULL, scan_run, &sc[i]) == 0;
    }
    for (size_t i = 0; i < t; i++)
        if (!started[i])
            scan_run(&sc[i]); /* the first part, or one no thread could be had for */
    size_t n = 0, bad = 0;
    for (size_t i = 0; i < t; i++) {
        if (started[i])
            pthread_join(tid[i], NULL);
        for (size_t x = 0; x < sc[i].n; x++)
            keep(hits, &n, k, sc[i].hits[x]);
        free(sc[i].hits);
        if (sc[i].bad && !bad)
            bad = sc[i].bad; /* parts in row order: the first damaged row, whatever the thread count */
    }
    free(started);
    free(sc);
    free(tid);
    free(q);
    if (bad) {
        if (vecset_check_row(v, bad - 1, e) == 0) /* a norm a little too small: within check_row's slack */
            err_set(e, v->path, 0, "damaged packed store: the stored length of '%s' (row %zu) is too small for its vector",
                    vecset_word(v, bad - 1), bad);
        return -1;
    }
    return (long)n;
}

/* ---- export ---- */

/* The shortest of %.6g .. %.9g that reads back as 'f' (%.9g always does). */
static int shortest(char *buf, size_t n, float f)
{
    int len = 0;
    for (int prec = 6; prec <= 9; prec++) {
        len = snprintf(buf, n, "%.*g", prec, (double)f);
        if (strtof(buf, NULL) == f)
            break;
    }
    return len;
}

/* " x1 x2 ... xD", each in shortest form. */
static void write_numbers(FILE *fp, const float *r, size_t dim)
{
    char buf[64];
    for (size_t j = 0; j < dim; j++) {
        buf[0] = ' ';
        int len = shortest(buf + 1, sizeof buf - 1, r[j]);
        fwrite(buf, 1, (size_t)len + 1, fp);
    }
}

int vecset_export_text(const vecset *v, const char *out, struct err *e)
{
    ofile *of = ofile_open(out, e);
    if (!of)
        return -1;
    FILE *fp = ofile_fp(of);
    size_t dim = (size_t)v->h.dim;
    fprintf(fp, "%llu %zu\n", (unsigned long long)v->h.count, dim);
    for (size_t i = 0; i < v->h.count; i++) {
        fputs(vecset_word(v, i), fp);
        write_numbers(fp, vecset_row(v, i), dim);
        fputc('\n', fp);
        if (ferror(fp))
            break;
    }
    return ofile_commit(of, e);
}
