/* test_text_ucd.c -- the text module checked against the Unicode Character
 * Database files that Debian's unicode-data package installs in
 * /usr/share/unicode/ (Unicode 15.0.0, the version utf8proc 2.8 implements).
 *
 *   NormalizationTest.txt (15.0.0, read through bzcat): text_nfkc() against
 *       the NFKC column, on all five columns of every line, plus the rule
 *       that a code point not listed in Part 1 is its own NFKC.
 *   CaseFolding.txt (15.0.0): full case folding (statuses C and F).
 *   DerivedNormalizationProps.txt (15.0.0), property NFKC_Casefold: the
 *       whole normalisation step (NFKC, folding, default-ignorable removal)
 *       on every code point.
 *   Scripts.txt (15.0.0): Latin letters lose their nonspacing marks; marks
 *       of other scripts survive on a letter of their own script.
 * Each check prints what it compared on stderr (visible in meson's log).
 */
#include <criterion/criterion.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <utf8proc.h>

#include "vecsift/text.h"

#define UCD "/usr/share/unicode/"
#define NCP 0x110000

/* Append the code points of a hex sequence like "0044 0307" to 'out' as
 * UTF-8; returns the byte length, or -1 on a malformed field. */
static long hex_to_utf8(const char *s, char *out, size_t cap)
{
    size_t n = 0;
    while (*s) {
        while (*s == ' ')
            s++;
        if (!*s)
            break;
        char *end;
        long c = strtol(s, &end, 16);
        if (end == s || c < 0 || c >= NCP || n + 4 >= cap)
            return -1;
        n += (size_t)utf8proc_encode_char((utf8proc_int32_t)c, (utf8proc_uint8_t *)out + n);
        s = end;
    }
    out[n] = '\0';
    return (long)n;
}

static int is_surrogate(long c)
{
    return c >= 0xD800 && c <= 0xDFFF;
}

/* Split a ';'-separated line in place into at most 'max' fields. */
static int fields(char *line, char **f, int max)
{
    int n = 0;
    char *hash = strchr(line, '#');
    if (hash)
        *hash = '\0';
    char *p = line;
    while (n < max) {
        f[n++] = p;
        char *semi = strchr(p, ';');
        if (!semi)
            break;
        *semi = '\0';
        p = semi + 1;
    }
    return n;
}

/* Parse "XXXX" or "XXXX..YYYY"; returns 0 on success. */
static int parse_range(const char *s, long *lo, long *hi)
{
    char *end;
    *lo = strtol(s, &end, 16);
    if (end == s)
        return -1;
    *hi = *lo;
    if (end[0] == '.' && end[1] == '.')
        *hi = strtol(end + 2, &end, 16);
    return 0;
}

/* ---- NormalizationTest.txt ---- */

Test(text_ucd, nfkc_matches_normalization_test, .timeout = 300)
{
    FILE *f = popen("bzcat " UCD "NormalizationTest.txt.bz2", "r");
    cr_assert_not_null(f);
    char line[4096], col[5][512], *fv[6];
    static unsigned char in_part1[NCP];
    long checked = 0, skipped = 0, failed = 0, part = -1;
    while (fgets(line, sizeof line, f)) {
        if (line[0] == '@') {
            part = strtol(line + 5, NULL, 10);
            continue;
        }
        if (line[0] == '#' || line[0] == '\n')
            continue;
        if (fields(line, fv, 6) < 5) {
            skipped++;
            continue;
        }
        int ok = 1;
        for (int k = 0; k < 5; k++)
            ok &= hex_to_utf8(fv[k], col[k], sizeof col[k]) >= 0;
        if (!ok) {
            skipped++;
            continue;
        }
        if (part == 1)
            in_part1[strtol(fv[0], NULL, 16)] = 1;
        /* NFKC conformance: c4 == toNFKC(c1) == toNFKC(c2) == toNFKC(c3)
         * == toNFKC(c4) == toNFKC(c5) (header of NormalizationTest.txt). */
        for (int k = 0; k < 5; k++) {
            char *got = text_nfkc(col[k], strlen(col[k]), NULL);
            if (!got || strcmp(got, col[3]) != 0) {
                if (failed++ < 10)
                    fprintf(stderr, "NFKC mismatch, line with source %s, column %d\n", fv[0], k + 1);
            }
            free(got);
        }
        checked++;
    }
    cr_assert_eq(pclose(f), 0, "bzcat failed: is unicode-data installed?");
    /* Every code point not in Part 1 is its own NFKC. */
    long invariant = 0;
    char one[8];
    for (long c = 1; c < NCP; c++) {
        if (is_surrogate(c) || in_part1[c])
            continue;
        int n = utf8proc_encode_char((utf8proc_int32_t)c, (utf8proc_uint8_t *)one);
        one[n] = '\0';
        char *got = text_nfkc(one, (size_t)n, NULL);
        if (!got || strcmp(got, one) != 0) {
            if (failed++ < 20)
                fprintf(stderr, "NFKC changed unlisted U+%04lX\n", c);
        }
        free(got);
        invariant++;
    }
    fprintf(stderr, "NormalizationTest.txt (Unicode 15.0.0): %ld lines checked (5 columns each), %ld skipped "
                    "(malformed), %ld unlisted code points checked invariant, %ld failures\n",
            checked, skipped, invariant, failed);
    cr_assert_gt(checked, 19000);
    cr_assert_eq(skipped, 0);
    cr_assert_eq(failed, 0);
}

/* ---- CaseFolding.txt ---- */

/* Full case folding table from CaseFolding.txt: fold_map[c] is the UTF-8
 * of the C or F mapping of c, or NULL. */
static char **load_folding(long *n_cf, long *n_st)
{
    FILE *f = fopen(UCD "CaseFolding.txt", "r");
    cr_assert_not_null(f, "cannot open " UCD "CaseFolding.txt");
    char **fold_map = calloc(NCP, sizeof *fold_map);
    char line[512], *fv[4], map[64];
    *n_cf = *n_st = 0;
    while (fgets(line, sizeof line, f)) {
        if (line[0] == '#' || line[0] == '\n')
            continue;
        cr_assert_geq(fields(line, fv, 4), 3);
        const char *status = fv[1] + strspn(fv[1], " ");
        if (*status != 'C' && *status != 'F') {
            (*n_st)++; /* S (simple, superseded by F) and T (Turkic only) */
            continue;
        }
        long c = strtol(fv[0], NULL, 16);
        cr_assert(c > 0 && c < NCP && hex_to_utf8(fv[2], map, sizeof map) > 0);
        fold_map[c] = strdup(map);
        (*n_cf)++;
    }
    fclose(f);
    return fold_map;
}

/* Apply the folding table to every code point of s into out. */
static void fold_string(char *const *fold_map, const char *s, char *out, size_t cap)
{
    size_t n = 0, len = strlen(s), i = 0;
    while (i < len) {
        int32_t c;
        utf8proc_ssize_t k = utf8proc_iterate((const utf8proc_uint8_t *)s + i, (utf8proc_ssize_t)(len - i), &c);
        cr_assert_gt(k, 0);
        const char *m = fold_map[c];
        size_t mlen = m ? strlen(m) : (size_t)k;
        cr_assert_lt(n + mlen, cap);
        memcpy(out + n, m ? m : s + i, mlen);
        n += mlen;
        i += (size_t)k;
    }
    out[n] = '\0';
}

/* Our fold of one code point is text_normalize() with marks kept, which
 * also applies NFKC.  The expected value is therefore x -> NFKC(fold(x))
 * repeated until it stops changing: one round is not always enough, e.g.
 * U+03F9 GREEK CAPITAL LUNATE SIGMA folds to U+03F2, whose NFKC is U+03C2
 * final sigma, which folds again to U+03C3.  (Repeating until stable is how
 * UAX #44 defines NFKC_Casefold.)  NFKC is text_nfkc(), itself checked
 * against NormalizationTest.txt above; folding is from CaseFolding.txt. */
Test(text_ucd, folding_matches_case_folding)
{
    long checked = 0, skipped = 0, failed = 0, rounds2 = 0;
    char **fold_map = load_folding(&checked, &skipped);
    struct text_options keep = TEXT_OPTIONS_INIT;
    keep.keep_accents = 1;
    char src[8], want[256], tmp[256];
    for (long c = 0; c < NCP; c++) {
        if (!fold_map[c])
            continue;
        int sn = utf8proc_encode_char((utf8proc_int32_t)c, (utf8proc_uint8_t *)src);
        src[sn] = '\0';
        strcpy(want, src);
        for (int round = 0;; round++) {
            fold_string(fold_map, want, tmp, sizeof tmp);
            char *k = text_nfkc(tmp, strlen(tmp), NULL);
            int same = strcmp(k, want) == 0;
            strcpy(want, k);
            free(k);
            if (same)
                break;
            cr_assert_lt(round, 5);
            rounds2 += round == 1; /* a change in the second round */
        }
        char *got = text_normalize(src, (size_t)sn, &keep, NULL);
        if (!got || strcmp(got, want) != 0) {
            if (failed++ < 10)
                fprintf(stderr, "fold mismatch for U+%04lX\n", c);
        }
        free(got);
    }
    for (long c = 0; c < NCP; c++)
        free(fold_map[c]);
    free(fold_map);
    fprintf(stderr, "CaseFolding.txt (Unicode 15.0.0): %ld C/F entries checked (%ld needed a second fold+NFKC "
                    "round), %ld S/T entries skipped, %ld failures\n",
            checked, rounds2, skipped, failed);
    cr_assert_gt(checked, 1400);
    cr_assert_eq(failed, 0);
}

/* ---- DerivedNormalizationProps.txt: NFKC_Casefold ---- */

Test(text_ucd, normalisation_matches_nfkc_casefold, .timeout = 300)
{
    FILE *f = fopen(UCD "DerivedNormalizationProps.txt", "r");
    cr_assert_not_null(f);
    /* mapping of code point c: pool[start[c] .. start[c] + len[c]) when
     * listed[c], else c itself (the file's @missing rule) */
    int32_t *start = calloc(NCP, sizeof *start);
    unsigned char *len = calloc(NCP, 1), *listed = calloc(NCP, 1);
    size_t pcap = 1 << 20, pn = 0;
    char *pool = malloc(pcap);
    char line[1024], *fv[4], map[256];
    long entries = 0;
    while (fgets(line, sizeof line, f)) {
        if (line[0] == '#' || line[0] == '\n' || !strstr(line, "; NFKC_CF;"))
            continue;
        cr_assert_geq(fields(line, fv, 4), 3);
        long lo, hi, m = hex_to_utf8(fv[2], map, sizeof map);
        cr_assert(parse_range(fv[0], &lo, &hi) == 0 && m >= 0 && m < 256);
        cr_assert_lt(pn + (size_t)m, pcap);
        memcpy(pool + pn, map, (size_t)m);
        for (long c = lo; c <= hi; c++) {
            start[c] = (int32_t)pn;
            len[c] = (unsigned char)m;
            listed[c] = 1;
        }
        pn += (size_t)m;
        entries++;
    }
    fclose(f);
    cr_assert_gt(entries, 5000);
    struct text_options keep = TEXT_OPTIONS_INIT;
    keep.keep_accents = 1;
    long checked = 0, failed = 0;
    char one[8], want[256];
    for (long c = 0; c < NCP; c++) {
        if (is_surrogate(c))
            continue;
        int n = utf8proc_encode_char((utf8proc_int32_t)c, (utf8proc_uint8_t *)one);
        size_t wn;
        if (listed[c]) {
            wn = len[c];
            memcpy(want, pool + start[c], wn);
        } else {
            wn = (size_t)n;
            memcpy(want, one, wn);
        }
        size_t gn = 0;
        char *got = text_normalize(one, (size_t)n, &keep, &gn);
        if (!got || gn != wn || memcmp(got, want, wn) != 0) {
            if (failed++ < 20)
                fprintf(stderr, "NFKC_Casefold mismatch at U+%04lX\n", c);
        }
        free(got);
        checked++;
    }
    fprintf(stderr, "DerivedNormalizationProps.txt NFKC_Casefold (Unicode 15.0.0): %ld code points checked, "
                    "%ld failures\n",
            checked, failed);
    free(start);
    free(len);
    free(listed);
    free(pool);
    cr_assert_eq(failed, 0);
}

/* ---- Scripts.txt: which marks are removed ---- */

/* Script of every code point, as an index into 'names' (0 = Unknown). */
static unsigned short *load_scripts(char names[][64], int *nnames)
{
    FILE *f = fopen(UCD "Scripts.txt", "r");
    cr_assert_not_null(f, "cannot open " UCD "Scripts.txt");
    unsigned short *sc = calloc(NCP, sizeof *sc);
    strcpy(names[0], "Unknown");
    *nnames = 1;
    char line[512], *fv[3];
    while (fgets(line, sizeof line, f)) {
        if (line[0] == '#' || line[0] == '\n')
            continue;
        cr_assert_eq(fields(line, fv, 3), 2);
        long lo, hi;
        cr_assert_eq(parse_range(fv[0], &lo, &hi), 0);
        char name[64];
        cr_assert_eq(sscanf(fv[1], " %63s", name), 1);
        int id = 0;
        while (id < *nnames && strcmp(names[id], name) != 0)
            id++;
        if (id == *nnames) {
            cr_assert_lt(id, 256);
            strcpy(names[(*nnames)++], name);
        }
        for (long c = lo; c <= hi; c++)
            sc[c] = (unsigned short)id;
    }
    fclose(f);
    return sc;
}

static int has_mn(const char *s)
{
    size_t len = strlen(s), i = 0;
    while (i < len) {
        int32_t c;
        utf8proc_ssize_t k = utf8proc_iterate((const utf8proc_uint8_t *)s + i, (utf8proc_ssize_t)(len - i), &c);
        if (k <= 0)
            return 1;
        if (utf8proc_category(c) == UTF8PROC_CATEGORY_MN)
            return 1;
        i += (size_t)k;
    }
    return 0;
}

/* Normalise base+mark with marks stripped and with marks kept; 1 when equal. */
static int mark_survives(int32_t base, int32_t mark)
{
    char s[16];
    int n = utf8proc_encode_char(base, (utf8proc_uint8_t *)s);
    n += utf8proc_encode_char(mark, (utf8proc_uint8_t *)s + n);
    struct text_options keep = TEXT_OPTIONS_INIT;
    keep.keep_accents = 1;
    char *a = text_normalize(s, (size_t)n, NULL, NULL);
    char *b = text_normalize(s, (size_t)n, &keep, NULL);
    int same = strcmp(a, b) == 0;
    free(a);
    free(b);
    return same;
}

static int is_letter(int32_t c)
{
    utf8proc_category_t k = utf8proc_category(c);
    return k >= UTF8PROC_CATEGORY_LU && k <= UTF8PROC_CATEGORY_LO;
}

/* (1) No letter of Script=Latin keeps a nonspacing mark after
 * normalisation (the point of the step: "café" meets "cafe").
 * (2) Every mark (Mn or Mc) of a script other than Latin, Common and
 * Inherited survives on the first letter of its own script: vowel signs of
 * Devanagari, Bengali, Thai... are never removed.
 * (3) Inherited nonspacing marks (U+0300 etc.) vanish after "a" and survive
 * after U+0915 DEVANAGARI LETTER KA. */
Test(text_ucd, latin_marks_removed_other_scripts_kept)
{
    static char names[256][64];
    int nnames;
    unsigned short *sc = load_scripts(names, &nnames);
    int latin = -1, common = -1, inherited = -1;
    for (int i = 0; i < nnames; i++) {
        if (strcmp(names[i], "Latin") == 0)
            latin = i;
        if (strcmp(names[i], "Common") == 0)
            common = i;
        if (strcmp(names[i], "Inherited") == 0)
            inherited = i;
    }
    cr_assert(latin > 0 && common > 0 && inherited > 0);
    int32_t first_letter[256];
    for (int i = 0; i < 256; i++)
        first_letter[i] = -1;
    for (long c = NCP - 1; c >= 0; c--)
        if (is_letter((int32_t)c))
            first_letter[sc[c]] = (int32_t)c;

    long latin_checked = 0, latin_failed = 0, other_checked = 0, other_failed = 0, inh_checked = 0,
         inh_failed = 0;
    char one[8];
    for (long c = 0; c < NCP; c++) {
        if (is_surrogate(c))
            continue;
        utf8proc_category_t k = utf8proc_category((int32_t)c);
        if (sc[c] == latin && is_letter((int32_t)c)) {
            int n = utf8proc_encode_char((int32_t)c, (utf8proc_uint8_t *)one);
            char *got = text_normalize(one, (size_t)n, NULL, NULL);
            if (has_mn(got) && latin_failed++ < 10)
                fprintf(stderr, "Latin letter U+%04lX keeps a mark\n", c);
            free(got);
            latin_checked++;
        } else if ((k == UTF8PROC_CATEGORY_MN || k == UTF8PROC_CATEGORY_MC) && sc[c] != latin
                   && sc[c] != common && sc[c] != inherited && first_letter[sc[c]] >= 0) {
            if (!mark_survives(first_letter[sc[c]], (int32_t)c) && other_failed++ < 10)
                fprintf(stderr, "mark U+%04lX (%s) removed after U+%04X\n", c, names[sc[c]],
                        (unsigned)first_letter[sc[c]]);
            other_checked++;
        } else if (k == UTF8PROC_CATEGORY_MN && sc[c] == inherited) {
            int n = utf8proc_encode_char('a', (utf8proc_uint8_t *)one);
            n += utf8proc_encode_char((int32_t)c, (utf8proc_uint8_t *)one + n);
            char *got = text_normalize(one, (size_t)n, NULL, NULL);
            int bad = has_mn(got) || !mark_survives(0x0915, (int32_t)c);
            if (bad && inh_failed++ < 10)
                fprintf(stderr, "inherited mark U+%04lX handled wrongly\n", c);
            free(got);
            inh_checked++;
        }
    }
    free(sc);
    fprintf(stderr, "Scripts.txt (Unicode 15.0.0): %ld Latin letters checked for marks (%ld failures), %ld marks "
                    "of scripts other than Latin, Common and Inherited checked kept (%ld failures), %ld inherited "
                    "marks checked (%ld failures)\n",
            latin_checked, latin_failed, other_checked, other_failed, inh_checked, inh_failed);
    cr_assert_gt(latin_checked, 1400);
    cr_assert_gt(other_checked, 1500);
    cr_assert_eq(latin_failed + other_failed + inh_failed, 0);
}
