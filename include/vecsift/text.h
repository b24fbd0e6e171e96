/* text.h -- Unicode normalisation and tokenising (utf8proc).
 *
 * The one place where text becomes tokens, used identically by vector import,
 * vector learning, features and prediction, so all of them see the same
 * tokens.  Steps: NFKC, Unicode case folding, removal of combining marks from
 * Latin-script letters (unless keep_accents), masking of e-mail addresses,
 * URLs and (optionally) numbers into placeholder tokens, then splitting by
 * general category: letters, marks and digits form tokens; an apostrophe or
 * hyphen between two word characters stays inside the word; everything else
 * (punctuation, symbols, spaces, U+2028/U+2029) separates.
 * It does not read files; see csv.h.
 */
#ifndef VECSIFT_TEXT_H
#define VECSIFT_TEXT_H

#include <stddef.h>

struct err;

struct text_options {
    int keep_accents;   /* 1: keep combining marks on Latin letters */
    int mask_email;     /* 1: an e-mail address becomes TEXT_MASK_EMAIL */
    int mask_url;       /* 1: a URL becomes TEXT_MASK_URL */
    int mask_number;    /* 1: a token of digits (any Unicode N*, possibly joined
                           by hyphens or apostrophes: "2024-05-01") becomes
                           TEXT_MASK_NUMBER */
};
/* Defaults: e-mails and URLs masked (personal data must not reach vectors or
 * models), numbers kept (ticket numbers and error codes often carry the route). */
#define TEXT_OPTIONS_INIT { 0, 1, 1, 0 }

/* Placeholders.  They contain '_' which the tokeniser never leaves in a
 * token, so no real word can collide with them. */
#define TEXT_MASK_EMAIL "_email_"
#define TEXT_MASK_URL "_link_"
#define TEXT_MASK_NUMBER "_number_"

/* The longest token kept, in bytes of normalised UTF-8.  A longer run of
 * word characters (a pasted attachment in base64, a hex dump, a log line
 * with no separators) is skipped and counted, not kept whole: one such run
 * of tens of megabytes would otherwise become a vocabulary entry of that
 * size in every model.  Skipped rather than cut: a prefix of such a run is
 * still a string no other text shares.  1024 bytes leave room for scripts
 * written without spaces, which come out as one token per clause (341 CJK
 * characters, see text.c). */
#define TEXT_MAX_TOKEN 1024

/* A growing list of tokens, owned by the caller.  Tokens are NUL-terminated
 * and stored back to back in 'buf'; tok i starts at buf + off[i]. */
struct text_tokens {
    char *buf;
    size_t len, cap;
    size_t *off;
    size_t n, ncap;
    /* Working memory reused by every call (normalised text, code points);
     * private to text.c. */
    void *scratch, *work;
    size_t scratch_cap, work_cap;
    /* Tokens longer than TEXT_MAX_TOKEN skipped since TEXT_TOKENS_INIT;
     * text_tokens_clear keeps the count, so it adds up over rows. */
    size_t too_long;
};
#define TEXT_TOKENS_INIT { NULL, 0, 0, NULL, 0, 0, NULL, NULL, 0, 0, 0 }

static inline const char *text_token(const struct text_tokens *t, size_t i)
{
    return t->buf + t->off[i];
}

/* Forget the tokens, keep the memory. */
void text_tokens_clear(struct text_tokens *t);
void text_tokens_release(struct text_tokens *t);

/* Tokenise s[0..len) (UTF-8) and APPEND the tokens to 't'.  Returns the
 * number of tokens appended, or -1 when 's' is not valid UTF-8 ('e' set to
 * "invalid UTF-8 at byte N", N the 0-based offset of the first bad byte; the
 * caller adds file and line).  'o' may be NULL (TEXT_OPTIONS_INIT).
 * Thread-safe: two threads may tokenise at once as long as each uses its own
 * 't'.  Reusing one 't' (text_tokens_clear() between rows) avoids any
 * allocation once its buffers have grown. */
long text_tokenize(const char *s, size_t len, const struct text_options *o, struct text_tokens *t, struct err *e);

/* Normalise one vocabulary entry (a token from a vector file) exactly as a
 * token in running text would be.  Returns a new string (caller frees) when
 * the entry becomes exactly one token, or NULL when it becomes none or
 * several (such an entry can never match a token of running text), when it
 * is not valid UTF-8, or when masking turned it into a placeholder (the
 * entry is one particular address, link or number).  The placeholder
 * strings themselves are returned unchanged, so a vector set learned from
 * masked text can be exported and imported again.  'o' may be NULL. */
char *text_normalize_token(const char *s, size_t len, const struct text_options *o);

/* The normalisation step alone: NFKC, Unicode full case folding, removal of
 * default-ignorable code points and (unless o->keep_accents) of nonspacing
 * marks on Latin-script letters; no masking, no splitting.  'o' may be NULL
 * (TEXT_OPTIONS_INIT).  Returns a new NUL-terminated string (caller frees)
 * and its length in '*outlen' (when not NULL), or NULL when 's' is not valid
 * UTF-8. */
char *text_normalize(const char *s, size_t len, const struct text_options *o, size_t *outlen);

/* Plain NFKC (Unicode Standard Annex #15) through the same code path as
 * text_normalize(), with folding, ignorable removal and mark removal off.
 * It exists so tests can check the normalisation core against the Unicode
 * conformance file.  Returns a new string (caller frees) or NULL on invalid
 * UTF-8. */
char *text_nfkc(const char *s, size_t len, size_t *outlen);

/* Short description of the settings, e.g. "nfkc,casefold,strip-latin-marks,
 * mask=email+url" (keep_accents gives "keep-marks"; no masking "mask=none"),
 * stored in models so predict refuses a mismatch.  Truncated to fit 'n'
 * (64 bytes always suffice).  'o' may be NULL. */
void text_options_describe(const struct text_options *o, char *buf, size_t n);

#endif
