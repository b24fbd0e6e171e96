/* text.c -- Unicode normalisation and tokenising on top of utf8proc.
 *
 * One call turns a UTF-8 text into tokens in three passes over the bytes:
 *   1. normalise: NFKC, full case folding, removal of default-ignorable code
 *      points and of nonspacing marks on Latin letters (into t->scratch);
 *   2. mask: e-mail addresses and URLs (and optionally numbers) become
 *      placeholder tokens, so personal data in tickets (addresses, links
 *      with tokens in them, account numbers) never reaches vectors,
 *      features or saved models;
 *   3. split by Unicode general category.
 * Masking runs on the normalised text but before splitting, because
 * splitting would cut an address into innocent-looking pieces; running it
 * after NFKC means full-width forms (U+FF20 FULLWIDTH COMMERCIAL AT) are
 * caught as well.
 * It does not read files (see csv.c) and does not intern tokens (vocab.c).
 * No static mutable state: every buffer lives in the caller's text_tokens.
 */
#include "vecsift/text.h"

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <utf8proc.h>

#include "vecsift/err.h"
#include "vecsift/xalloc.h"

/* normalise() flags */
#define N_FOLD 1  /* case folding and default-ignorable removal */
#define N_STRIP 2 /* drop nonspacing marks that follow a Latin base */

/* ---- normalisation ---- */

/* Code points counted as "Latin" bases for mark removal: the Unicode blocks
 * that hold the Latin script (block ranges from Blocks.txt, Unicode 15.0):
 *   0000..007F Basic Latin          0080..00FF Latin-1 Supplement
 *   0100..017F Latin Extended-A     0180..024F Latin Extended-B
 *   0250..02AF IPA Extensions       1D00..1D7F Phonetic Extensions
 *   1D80..1DBF Phonetic Extensions Supplement
 *   1E00..1EFF Latin Extended Additional
 *   2C60..2C7F Latin Extended-C     A720..A7FF Latin Extended-D
 *   AB30..AB6F Latin Extended-E     10780..107BF Latin Extended-F
 *   1DF00..1DFFF Latin Extended-G
 * Basic Latin also holds spaces and punctuation; a nonspacing mark on those
 * is stray and dropping it is harmless.  Marks after any other base are kept:
 * in Devanagari, Bengali, Thai and most Brahmic scripts vowel signs are
 * marks (category Mn or Mc), and removing them would change the word, which
 * is why utf8proc's own STRIPMARK is not used. */
static int is_latin_base(int32_t c)
{
    return c <= 0x02AF
        || (c >= 0x1D00 && c <= 0x1DBF)
        || (c >= 0x1E00 && c <= 0x1EFF)
        || (c >= 0x2C60 && c <= 0x2C7F)
        || (c >= 0xA720 && c <= 0xA7FF)
        || (c >= 0xAB30 && c <= 0xAB6F)
        || (c >= 0x10780 && c <= 0x107BF)
        || (c >= 0x1DF00 && c <= 0x1DFFF);
}

/* Default_Ignorable_Code_Point (DerivedCoreProperties.txt, Unicode 15.0)
 * holds whole blocks reserved for future format characters; their
 * unassigned members lie in 2060..206F, FFF0..FFFB and E0000..E0FFF.
 * Only called for unassigned (Cn) code points. */
static int is_reserved_ignorable(int32_t c)
{
    return (c >= 0x2060 && c <= 0x206F) || (c >= 0xFFF0 && c <= 0xFFFB) || (c >= 0xE0000 && c <= 0xE0FFF);
}

static int is_mark_category(utf8proc_category_t k)
{
    return k == UTF8PROC_CATEGORY_MN || k == UTF8PROC_CATEGORY_MC || k == UTF8PROC_CATEGORY_ME;
}

/* 0-based offset of the first byte of s[0..len) that is not valid UTF-8,
 * or -1 when it is all valid. */
static long bad_utf8_offset(const char *s, size_t len)
{
    size_t i = 0;
    while (i < len) {
        int32_t c;
        utf8proc_ssize_t k = utf8proc_iterate((const utf8proc_uint8_t *)s + i, (utf8proc_ssize_t)(len - i), &c);
        if (k < 0)
            return (long)i;
        i += (size_t)k;
    }
    return -1;
}

/* Working memory of normalise(): 'out' receives the UTF-8 result, 'work'
 * holds the code points of one non-ASCII stretch. */
struct nbuf {
    void **out;
    size_t *out_cap;
    void **work;
    size_t *work_cap;
};

static void reserve(void **buf, size_t *cap, size_t need)
{
    if (need > *cap)
        *buf = xgrow(*buf, cap, need, 1);
}

/* Copy ASCII s[0..n) to d, folding A-Z when 'fold'. */
static void copy_ascii(char *d, const char *s, size_t n, int fold)
{
    if (!fold) {
        memcpy(d, s, n);
        return;
    }
    for (size_t i = 0; i < n; i++) {
        char ch = s[i];
        d[i] = ch >= 'A' && ch <= 'Z' ? (char)(ch + ('a' - 'A')) : ch;
    }
}

/* Normalise one stretch s[0..len) with utf8proc and append the UTF-8 to
 * b->out at offset *o.  Returns 0, or -1 on invalid UTF-8. */
static int normalise_stretch(const char *s, size_t len, int flags, struct nbuf *b, size_t *o)
{
    utf8proc_option_t opt = UTF8PROC_STABLE | UTF8PROC_COMPAT | UTF8PROC_DECOMPOSE;
    if (flags & N_FOLD)
        opt |= UTF8PROC_CASEFOLD | UTF8PROC_IGNORE;
    /* NFKD (+ folding) into code points.  utf8proc_decompose returns the
     * size it needs when the buffer is too small; one retry suffices.  One
     * slot is kept spare because utf8proc_reencode needs it. */
    utf8proc_ssize_t n;
    for (;;) {
        size_t slots = *b->work_cap / sizeof(int32_t);
        n = utf8proc_decompose((const utf8proc_uint8_t *)s, (utf8proc_ssize_t)len,
                               *b->work, slots ? (utf8proc_ssize_t)slots - 1 : 0, opt);
        if (n == UTF8PROC_ERROR_INVALIDUTF8)
            return -1;
        if (n < 0)
            abort(); /* only INVALIDUTF8 can come from these options, or a length past SSIZE_MAX */
        if ((size_t)n + 1 <= slots)
            break;
        reserve(b->work, b->work_cap, xmul((size_t)n + 1, sizeof(int32_t)));
    }
    int32_t *cp = *b->work;
    if (flags & (N_STRIP | N_FOLD)) {
        /* Drop a nonspacing mark when the last non-mark before it is a
         * Latin base (canonical ordering has already put all marks of one
         * base right after it), and, when folding, the unassigned code points
         * that Unicode reserves as default-ignorable, which utf8proc's
         * IGNORE leaves in place. */
        int latin = 0;
        utf8proc_ssize_t w = 0;
        for (utf8proc_ssize_t r = 0; r < n; r++) {
            utf8proc_category_t k = utf8proc_category(cp[r]);
            if (is_mark_category(k)) {
                if (latin && k == UTF8PROC_CATEGORY_MN && (flags & N_STRIP))
                    continue;
            } else {
                if (k == UTF8PROC_CATEGORY_CN && (flags & N_FOLD) && is_reserved_ignorable(cp[r]))
                    continue;
                latin = is_latin_base(cp[r]);
            }
            cp[w++] = cp[r];
        }
        n = w;
    }
    /* Canonical composition, then UTF-8 written in place over the code
     * points (never longer than 4 bytes per code point). */
    utf8proc_ssize_t m = utf8proc_reencode(cp, n, UTF8PROC_STABLE | UTF8PROC_COMPOSE);
    if (m < 0)
        abort(); /* cannot happen: the code points came from utf8proc itself */
    reserve(b->out, b->out_cap, *o + (size_t)m + 1);
    memcpy((char *)*b->out + *o, cp, (size_t)m);
    *o += (size_t)m;
    return 0;
}

/* Normalise s[0..len) into *b->out.  Returns the byte length of the
 * NUL-terminated UTF-8 result, or -1 when 's' is not valid UTF-8.
 *
 * ASCII, by far the commonest input, takes a fast path: NFKC leaves ASCII
 * unchanged, full case folding of ASCII is A-Z -> a-z (CaseFolding.txt), and
 * ASCII holds no default-ignorable code point and no mark.  Only the
 * non-ASCII stretches go through utf8proc, each together with the ASCII
 * character just before it, which a following combining mark may compose
 * with or (being Latin) lose.  Cutting before an ASCII character is safe:
 * no canonical composition has an ASCII second element, ASCII is a starter
 * (canonical combining class 0), and folding, compatibility mapping and
 * ignorable removal act on each code point alone.  tests/test_text.c checks
 * the result against utf8proc_map() on whole strings. */
static long normalise(const char *s, size_t len, int flags, struct nbuf *b)
{
    int fold = flags & N_FOLD;
    size_t o = 0, i = 0;
    reserve(b->out, b->out_cap, len + 1);
    while (i < len) {
        size_t j = i;
        while (j < len && !((unsigned char)s[j] & 0x80))
            j++;
        size_t a_end = j < len && j > i ? j - 1 : j; /* keep the base of a following mark */
        reserve(b->out, b->out_cap, o + (a_end - i) + 1);
        copy_ascii((char *)*b->out + o, s + i, a_end - i, fold);
        o += a_end - i;
        if (j == len)
            break;
        size_t k = j;
        while (k < len && ((unsigned char)s[k] & 0x80))
            k++;
        if (normalise_stretch(s + a_end, k - a_end, flags, b, &o) < 0)
            return -1;
        i = k;
    }
    ((char *)*b->out)[o] = '\0';
    return (long)o;
}

static char *normalise_dup(const char *s, size_t len, int flags, size_t *outlen)
{
    void *buf = NULL, *work = NULL;
    size_t cap = 0, work_cap = 0;
    struct nbuf b = { &buf, &cap, &work, &work_cap };
    long m = normalise(s, len, flags, &b);
    free(work);
    if (m < 0) {
        free(buf);
        return NULL;
    }
    /* not xstrndup: the text may hold U+0000, which stays as a separator */
    char *r = xmalloc((size_t)m + 1);
    memcpy(r, buf, (size_t)m + 1);
    free(buf);
    if (outlen)
        *outlen = (size_t)m;
    return r;
}

static int flags_of(const struct text_options *o)
{
    return N_FOLD | (o && o->keep_accents ? 0 : N_STRIP);
}

char *text_normalize(const char *s, size_t len, const struct text_options *o, size_t *outlen)
{
    return normalise_dup(s, len, flags_of(o), outlen);
}

char *text_nfkc(const char *s, size_t len, size_t *outlen)
{
    return normalise_dup(s, len, 0, outlen);
}

/* ---- character classes ---- */

enum cls { C_SPLIT, C_WORD, C_NUM, C_APOS, C_HYPH };

/* Decode one code point of valid UTF-8 at p (end e); sets *c, returns bytes. */
static int decode(const unsigned char *p, const unsigned char *e, int32_t *c)
{
    if (p[0] < 0x80) {
        *c = p[0];
        return 1;
    }
    utf8proc_ssize_t k = utf8proc_iterate(p, e - p, c);
    return k > 0 ? (int)k : 1;
}

/* Letters (L*) and marks (M*) are word characters; numbers (N*) are word
 * characters that may form a number token.  U+2019 RIGHT SINGLE QUOTATION
 * MARK and U+02BC MODIFIER LETTER APOSTROPHE count as U+0027, U+2010 HYPHEN
 * and U+2011 NON-BREAKING HYPHEN as U+002D.  Everything else separates,
 * including '_' (Pc) and U+2028/U+2029 (Zl, Zp). */
/* NEEDSWORK: scripts written without spaces (Chinese, Japanese, Thai) come
 * out as one token per run of letters; splitting them needs a dictionary or
 * per-character tokens, which utf8proc does not provide. */
static enum cls classify(int32_t c)
{
    if (c < 0x80) {
        if ((c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z'))
            return C_WORD;
        if (c >= '0' && c <= '9')
            return C_NUM;
        return c == '\'' ? C_APOS : c == '-' ? C_HYPH : C_SPLIT;
    }
    if (c == 0x2019 || c == 0x02BC)
        return C_APOS;
    if (c == 0x2010 || c == 0x2011)
        return C_HYPH;
    utf8proc_category_t k = utf8proc_category(c);
    if (k >= UTF8PROC_CATEGORY_LU && k <= UTF8PROC_CATEGORY_ME)
        return C_WORD;
    if (k >= UTF8PROC_CATEGORY_ND && k <= UTF8PROC_CATEGORY_NO)
        return C_NUM;
    return C_SPLIT;
}

static int is_wordc(enum cls k)
{
    return k == C_WORD || k == C_NUM;
}

/* ---- masking ---- */

/* Characters allowed in the local part of an address (RFC 5322 dot-atom,
 * restricted to the ones seen in practice) besides word characters. */
static int local_extra(int32_t c)
{
    return c == '.' || c == '_' || c == '%' || c == '+' || c == '-' || c == '\'';
}

/* Length of an e-mail address starting at p, or 0; '*stop' is set to where
 * the local part ended.  Shape: a local part of
 * word characters and . _ % + - ', '@', then at least two dot-separated
 * labels of word characters and '-', the last containing a letter.  Word
 * characters are Unicode letters, marks and digits, so internationalised
 * addresses (RFC 6531) match too. */
static size_t match_email(const unsigned char *p, const unsigned char *e, const unsigned char **stop)
{
    const unsigned char *q = p;
    int32_t c;
    while (q < e) {
        int k = decode(q, e, &c);
        if (c == '@')
            break;
        if (!is_wordc(classify(c)) && !local_extra(c))
            break;
        q += k;
    }
    /* Any start between p and q would scan to the same q and fail or
     * succeed the same way: the caller need not try again before it (this
     * keeps "a.a.a.a..." linear instead of quadratic). */
    *stop = q;
    if (q == p || q >= e || *q != '@')
        return 0;
    q++; /* '@' */
    const unsigned char *end = NULL;
    int labels = 0;
    for (;;) {
        /* one label */
        const unsigned char *start = q;
        int letter = 0;
        while (q < e) {
            int k = decode(q, e, &c);
            enum cls kc = classify(c);
            if (!is_wordc(kc) && c != '-')
                break;
            letter |= kc == C_WORD;
            q += k;
        }
        if (q == start)
            break;
        labels++;
        if (labels >= 2 && letter)
            end = q;
        if (q < e && *q == '.' && q + 1 < e) {
            int32_t c2;
            decode(q + 1, e, &c2);
            if (is_wordc(classify(c2))) {
                q++;
                continue;
            }
        }
        break;
    }
    return end ? (size_t)(end - p) : 0;
}

/* Length of a URL starting at p, or 0: "http://", "https://" or "www."
 * (the text is already case-folded) followed by anything up to a space,
 * a control, a quotation mark or one of < > ` { } | \ ^ (characters RFC 3986
 * never allows unescaped), minus trailing sentence punctuation. */
static size_t match_url(const unsigned char *p, const unsigned char *e)
{
    size_t n = (size_t)(e - p), head;
    if (n > 8 && memcmp(p, "https://", 8) == 0)
        head = 8;
    else if (n > 7 && memcmp(p, "http://", 7) == 0)
        head = 7;
    else if (n > 4 && memcmp(p, "www.", 4) == 0)
        head = 4;
    else
        return 0;
    const unsigned char *q = p + head;
    while (q < e) {
        int32_t c;
        int k = decode(q, e, &c);
        if (c < 0x80) {
            if (c <= ' ' || c == 0x7f || strchr("<>\"`{}|\\^", (int)c))
                break;
        } else {
            utf8proc_category_t cat = utf8proc_category(c);
            if (cat == UTF8PROC_CATEGORY_ZS || cat == UTF8PROC_CATEGORY_ZL || cat == UTF8PROC_CATEGORY_ZP
                || cat == UTF8PROC_CATEGORY_CC || cat == UTF8PROC_CATEGORY_PI || cat == UTF8PROC_CATEGORY_PF)
                break;
        }
        q += k;
    }
    while (q > p + head && strchr(".,;:!?')]}", q[-1]))
        q--;
    if (q == p + head)
        return 0;
    return (size_t)(q - p);
}

/* ---- tokens ---- */

void text_tokens_clear(struct text_tokens *t)
{
    t->len = 0;
    t->n = 0;
}

void text_tokens_release(struct text_tokens *t)
{
    if (!t)
        return;
    free(t->buf);
    free(t->off);
    free(t->scratch);
    free(t->work);
    memset(t, 0, sizeof *t);
}

/* Record the token that starts at t->buf + start and ends at t->len. */
static void end_token(struct text_tokens *t, size_t start)
{
    t->buf[t->len++] = '\0';
    t->off = xgrow(t->off, &t->ncap, t->n + 1, sizeof *t->off);
    t->off[t->n++] = start;
}

/* End the token being built; 'as_number' replaces it by TEXT_MASK_NUMBER
 * (room for it was reserved when the token started).  A token longer than
 * TEXT_MAX_TOKEN is dropped and counted (text.h says why). */
static void close_token(struct text_tokens *t, size_t start, int as_number)
{
    if (as_number) {
        t->len = start;
        memcpy(t->buf + t->len, TEXT_MASK_NUMBER, sizeof TEXT_MASK_NUMBER - 1);
        t->len += sizeof TEXT_MASK_NUMBER - 1;
    } else if (t->len - start > TEXT_MAX_TOKEN) {
        t->len = start;
        t->too_long++;
        return;
    }
    end_token(t, start);
}

static void put_placeholder(struct text_tokens *t, const char *ph)
{
    size_t n = strlen(ph);
    t->buf = xgrow(t->buf, &t->cap, t->len + n + 1, 1);
    size_t start = t->len;
    memcpy(t->buf + t->len, ph, n);
    t->len += n;
    end_token(t, start);
}

/* An ASCII letter or digit (classify() gives C_WORD or C_NUM). */
static int is_ascii_alnum(unsigned char ch)
{
    return (unsigned)((ch | 0x20) - 'a') < 26u || (unsigned)(ch - '0') < 10u;
}

/* Split normalised text p[0..m) into tokens appended to 't'. */
static long split(struct text_tokens *t, const unsigned char *p, size_t m, const struct text_options *o)
{
    const unsigned char *e = p + m, *q = p;
    size_t n0 = t->n, start = 0;
    int in_tok = 0, all_num = 0;
    int try_email = o->mask_email && memchr(p, '@', m) != NULL;
    int try_url = o->mask_url;
    const unsigned char *email_stop = p;
    while (q < e) {
        if (!in_tok && (try_email || try_url)) {
            size_t k = 0;
            const char *ph = NULL;
            /* every URL match_url knows starts with 'h' or 'w' */
            if (try_url && (*q == 'h' || *q == 'w') && (k = match_url(q, e)) > 0)
                ph = TEXT_MASK_URL;
            else if (try_email && q >= email_stop && (k = match_email(q, e, &email_stop)) > 0)
                ph = TEXT_MASK_EMAIL;
            if (ph) {
                put_placeholder(t, ph);
                q += k;
                continue;
            }
        }
        if (is_ascii_alnum(*q)) {
            /* A run of ASCII letters and digits, the commonest case, in one
             * copy: what the loop below does for each of them (start the
             * token, copy, note whether all are digits), without decoding
             * and classifying one at a time. */
            const unsigned char *z = q;
            int digits = 1;
            while (z < e && is_ascii_alnum(*z)) {
                digits &= *z <= '9';
                z++;
            }
            if (!in_tok) {
                t->buf = xgrow(t->buf, &t->cap, t->len + (size_t)(e - q) + 16, 1);
                start = t->len;
                in_tok = 1;
                all_num = 1;
            }
            memcpy(t->buf + t->len, q, (size_t)(z - q));
            t->len += (size_t)(z - q);
            all_num &= digits;
            q = z;
            continue;
        }
        int32_t c;
        int k = decode(q, e, &c);
        enum cls kc = classify(c);
        if (is_wordc(kc)) {
            if (!in_tok) {
                /* room for the rest of the text, its NUL and a placeholder */
                t->buf = xgrow(t->buf, &t->cap, t->len + (size_t)(e - q) + 16, 1);
                start = t->len;
                in_tok = 1;
                all_num = 1;
            }
            memcpy(t->buf + t->len, q, (size_t)k);
            t->len += (size_t)k;
            all_num &= kc == C_NUM;
        } else if (in_tok && (kc == C_APOS || kc == C_HYPH) && q + k < e) {
            /* a joiner stays only between two word characters */
            int32_t c2;
            decode(q + k, e, &c2);
            if (is_wordc(classify(c2))) {
                t->buf[t->len++] = kc == C_APOS ? '\'' : '-';
            } else {
                close_token(t, start, all_num && o->mask_number);
                in_tok = 0;
            }
        } else if (in_tok) {
            close_token(t, start, all_num && o->mask_number);
            in_tok = 0;
        }
        q += k;
    }
    if (in_tok)
        close_token(t, start, all_num && o->mask_number);
    return (long)(t->n - n0);
}

long text_tokenize(const char *s, size_t len, const struct text_options *o, struct text_tokens *t, struct err *e)
{
    static const struct text_options defaults = TEXT_OPTIONS_INIT;
    if (!o)
        o = &defaults;
    struct nbuf b = { &t->scratch, &t->scratch_cap, &t->work, &t->work_cap };
    long m = normalise(s, len, flags_of(o), &b);
    if (m < 0)
        return err_set(e, NULL, 0, "invalid UTF-8 at byte %ld", bad_utf8_offset(s, len));
    return split(t, t->scratch, (size_t)m, o);
}

char *text_normalize_token(const char *s, size_t len, const struct text_options *o)
{
    /* The placeholders themselves (an exported vector set learned from
     * masked text holds them) map to themselves; they would otherwise split
     * at '_' into ordinary words. */
    static const char *const ph[] = { TEXT_MASK_EMAIL, TEXT_MASK_URL, TEXT_MASK_NUMBER };
    for (size_t i = 0; i < sizeof ph / sizeof ph[0]; i++)
        if (len == strlen(ph[i]) && memcmp(s, ph[i], len) == 0)
            return xstrdup(ph[i]);
    struct text_tokens t = TEXT_TOKENS_INIT;
    struct err e = ERR_INIT;
    char *r = NULL;
    /* A single token that is a placeholder came from masking: the entry is
     * one particular address, link or number, not the class of them. */
    if (text_tokenize(s, len, o, &t, &e) == 1 && text_token(&t, 0)[0] != '_')
        r = xstrdup(text_token(&t, 0));
    text_tokens_release(&t);
    return r;
}

void text_options_describe(const struct text_options *o, char *buf, size_t n)
{
    static const struct text_options defaults = TEXT_OPTIONS_INIT;
    if (!o)
        o = &defaults;
    char mask[32] = "";
    if (o->mask_email)
        strcat(mask, "+email");
    if (o->mask_url)
        strcat(mask, "+url");
    if (o->mask_number)
        strcat(mask, "+number");
    snprintf(buf, n, "nfkc,casefold,%s,mask=%s",
             o->keep_accents ? "keep-marks" : "strip-latin-marks",
             mask[0] ? mask + 1 : "none");
}
