/* cmd_vectors_map.c -- 'vectors map': words of a vector set drawn on a 2-D
 * map (t-SNE), each point labelled with its word.
 *
 * The rows are the words' unit vectors, so the Euclidean distances t-SNE
 * sees are a function of cosine similarity alone (|a - b|^2 = 2 - 2 cos for
 * unit a, b).  --neighbours adds each word's nearest words, so a few words
 * give a map with some structure.  The drawing is written here rather than
 * by svgplot_scatter, which has no per-point text labels.
 * NEEDSWORK: a labelled-points mode in svgplot.h would let both maps share
 * one drawing routine.
 */
#include "cmd_vectors.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "map_out.h"
#include "vecsift/err.h"
#include "vecsift/ofile.h"
#include "vecsift/svgplot.h"
#include "vecsift/vecset.h"
#include "vecsift/xalloc.h"

static const struct cli_opt opts[] = {
    { "output", 'o', "<file>", "where to write the SVG drawing (default: - for stdout)" },
    { "neighbours", 'k', "<n>", "also map the n nearest words of each word given (default: 0)" },
    MAP_OPTIONS,
    { "seed", 's', "<n>", "seed of the map's random start (default: 1)" },
    { "keep-accents", 0, NULL, "the store was packed with --keep-accents" },
    { "quiet", 'q', NULL, "no notes on stderr" },
    { NULL, 0, NULL, NULL },
};

const struct cli_cmd vectors_map_info = {
    "vectors map", "<vectors.vecs> <word>... -o MAP.svg",
    "draw words on a 2-D map (t-SNE)",
    opts,
    "Maps the words given (at least 4 with their neighbours) by t-SNE over\n"
    "their unit vectors, so only cosine similarity counts.  Nearby words have\n"
    "similar vectors; the distances between far-apart groups mean little.\n"
    "Same words, options and --seed give the same file byte for byte.",
};

/* SVGPLOT_MAP_CAPTION says "text"; this map shows words. */
#define WORD_CAPTION \
    "Each dot is one word, placed so that words with similar vectors sit close together. " \
    "Read only what is near: the gaps between groups that lie far apart, where the groups sit " \
    "and how big they look say little about the vectors."

/* Drawing geometry, in SVG user units. */
static const double PLOT = 640, MARGIN = 60, LINE_H = 18, CHAR_W = 7.5;

static void draw(FILE *fp, const double *Y, size_t n, const char *const *words, const char *caption)
{
    double x0 = Y[0], x1 = Y[0], y0 = Y[1], y1 = Y[1];
    for (size_t i = 1; i < n; i++) {
        x0 = fmin(x0, Y[2 * i]), x1 = fmax(x1, Y[2 * i]);
        y0 = fmin(y0, Y[2 * i + 1]), y1 = fmax(y1, Y[2 * i + 1]);
    }
    double span = fmax(x1 - x0, y1 - y0), scale = span > 0 ? (PLOT - 2 * MARGIN) / span : 0;
    double cx = (x0 + x1) / 2, cy = (y0 + y1) / 2;
    /* the caption, wrapped at spaces */
    size_t wrap = (size_t)((PLOT - 40) / CHAR_W), nlines = 0, len = strlen(caption);
    size_t *cut = xcalloc(2 * (len + 1), sizeof *cut);
    for (size_t s = 0; s < len;) {
        size_t e = s + wrap < len ? s + wrap : len;
        if (e < len) {
            size_t b = e;
            while (b > s && caption[b] != ' ')
                b--;
            e = b > s ? b : e;
        }
        cut[2 * nlines] = s, cut[2 * nlines + 1] = e;
        nlines++;
        s = e < len && caption[e] == ' ' ? e + 1 : e;
    }
    double height = PLOT + (double)nlines * LINE_H + 20;
    fprintf(fp, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
                "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"%.0f\" height=\"%.0f\" "
                "viewBox=\"0 0 %.0f %.0f\" font-family=\"sans-serif\" font-size=\"13\">\n<desc>",
            PLOT, height, PLOT, height);
    svgplot_xml_text(fp, caption);
    fprintf(fp, "</desc>\n<rect x=\"0\" y=\"0\" width=\"%.0f\" height=\"%.0f\" fill=\"#ffffff\"/>\n", PLOT, height);
    fputs("<g class=\"words\" fill=\"#0072B2\">\n", fp);
    for (size_t i = 0; i < n; i++) {
        double x = PLOT / 2 + (Y[2 * i] - cx) * scale, y = PLOT / 2 - (Y[2 * i + 1] - cy) * scale;
        fprintf(fp, "<circle cx=\"%.2f\" cy=\"%.2f\" r=\"3\"><title>", x, y);
        svgplot_xml_text(fp, words[i]);
        fprintf(fp, "</title></circle><text x=\"%.2f\" y=\"%.2f\" fill=\"#222222\" font-size=\"11\">", x + 4, y - 3);
        svgplot_xml_text(fp, words[i]);
        fputs("</text>\n", fp);
    }
    fputs("</g>\n<g class=\"caption\" fill=\"#333333\">\n", fp);
    for (size_t l = 0; l < nlines; l++) {
        char *line = xstrndup(caption + cut[2 * l], cut[2 * l + 1] - cut[2 * l]);
        fprintf(fp, "<text x=\"20\" y=\"%.2f\">", PLOT + (double)(l + 1) * LINE_H);
        svgplot_xml_text(fp, line);
        fputs("</text>\n", fp);
        free(line);
    }
    fputs("</g>\n</svg>\n", fp);
    free(cut);
}

/* Append row r to rows[] unless it is there already. */
static void add_row(size_t *rows, size_t *n, size_t r)
{
    for (size_t i = 0; i < *n; i++)
        if (rows[i] == r)
            return;
    rows[(*n)++] = r;
}

int vectors_map(int argc, char **argv)
{
    const struct cli_cmd *cmd = &vectors_map_info;
    struct map_args ma;
    map_args_init(&ma);
    const char *out = "-", *val;
    long k = 0, seed = 1;
    int keep_accents = 0, rc = ERR_INPUT, i;
    struct cli_parser p;
    struct err e = ERR_INIT;
    vecset *v = NULL;
    size_t *given = NULL, *rows = NULL, n = 0;
    double *X = NULL, *Y = NULL;
    const char **words = NULL;
    char *caption = NULL;
    float *q = NULL;
    struct vecset_hit *hits = NULL;
    ofile *o = NULL, *oc = NULL;
    cli_parser_init(&p, cmd, argc, argv);
    while ((i = cli_next(&p, &val)) >= 0) {
        const char *name = cmd->opts[i].name;
        int t = map_args_option(&ma, cmd, name, val);
        if (t < 0)
            goto out;
        if (t > 0)
            continue;
        if (strcmp(name, "output") == 0)
            out = val;
        else if (strcmp(name, "neighbours") == 0 && cli_long(cmd, name, val, 0, 1000, &k) < 0)
            goto out;
        else if (strcmp(name, "seed") == 0 && cli_long(cmd, name, val, 0, 0x7fffffffffffffffL, &seed) < 0)
            goto out;
        else if (strcmp(name, "keep-accents") == 0)
            keep_accents = 1;
        else if (strcmp(name, "quiet") == 0)
            cli_quiet = 1;
    }
    if (i != CLI_END) {
        rc = i == CLI_HELP ? ERR_OK : ERR_INPUT;
        goto out;
    }
    if (p.npos < 2) {
        rc = cli_usage(cmd, "'vectors map' needs a packed store and words to map");
        goto out;
    }
    ma.tp.seed = (uint64_t)seed;
    size_t nw = (size_t)p.npos - 1;
    const char *ins[] = { p.pos[0] };
    if (ofile_check_distinct(out, ins, 1, &e) < 0 || (ma.coords && ofile_check_distinct(ma.coords, ins, 1, &e) < 0))
        goto fail;
    if (!(v = vecset_open(p.pos[0], &e)))
        goto fail;
    given = xcalloc(nw, sizeof *given);
    if (vectors_find_words(v, p.pos + 1, nw, keep_accents, given, &e) < 0)
        goto fail;
    size_t D = vecset_dim(v);
    rows = xcalloc(xmul(nw, (size_t)k + 1), sizeof *rows);
    q = xcalloc(D, sizeof *q);
    hits = xcalloc((size_t)k + 1, sizeof *hits);
    for (size_t w = 0; w < nw; w++) {
        add_row(rows, &n, given[w]);
        if (k == 0)
            continue;
        if (vecset_check_row(v, given[w], &e) < 0)
            goto fail;
        memcpy(q, vecset_row(v, given[w]), D * sizeof *q);
        long nh = vecset_nearest(v, q, (size_t)k, &given[w], 1, vectors_default_threads(), hits, &e);
        if (nh < 0)
            goto fail;
        for (long h = 0; h < nh; h++)
            add_row(rows, &n, hits[h].row);
    }
    if (n < 4) {
        err_set(&e, vecset_path(v), 0, "a map needs at least 4 distinct words, got %zu", n);
        err_hint(&e, "name more words, or add neighbours with --neighbours N");
        goto fail;
    }
    X = xcalloc(xmul(n, D), sizeof *X);
    words = xcalloc(n, sizeof *words);
    for (size_t r = 0; r < n; r++) {
        const float *row = vecset_row(v, rows[r]);
        double norm = vecset_norm(v, rows[r]);
        if (vecset_check_row(v, rows[r], &e) < 0)
            goto fail; /* damage, not a zero vector */
        if (!(norm > 0)) {
            err_set(&e, vecset_path(v), 0, "'%s' has the zero vector: no direction to map",
                    vecset_word(v, rows[r]));
            goto fail;
        }
        for (size_t d = 0; d < D; d++)
            X[r * D + d] = row[d] / norm;
        words[r] = vecset_word(v, rows[r]);
    }
    Y = xcalloc(xmul(n, 2), sizeof *Y);
    if (tsne_run(X, n, D, &ma.tp, Y, &e) < 0)
        goto fail;
    char what[512];
    snprintf(what, sizeof what, "unit word vectors of %.400s", vecset_path(v));
    caption = map_caption_new(WORD_CAPTION, &ma, n, what);
    if (!(o = ofile_open(out, &e)) || (ma.coords && !(oc = ofile_open(ma.coords, &e))))
        goto fail;
    draw(ofile_fp(o), Y, n, words, caption);
    if (oc)
        map_write_coords(ofile_fp(oc), "word", words, Y, n);
    int bad = ofile_commit(o, &e) < 0;
    o = NULL;
    if (bad || (oc && ofile_commit(oc, &e) < 0)) {
        oc = NULL;
        goto fail;
    }
    oc = NULL;
    cli_note("mapped %zu words (%zu asked for, the rest their neighbours); seed %llu", n, nw,
             (unsigned long long)ma.tp.seed);
    rc = ERR_OK;
    goto out;
fail:
    rc = cli_fail(&e);
out:
    ofile_abort(o);
    ofile_abort(oc);
    free(caption);
    free(words);
    free(Y);
    free(X);
    free(hits);
    free(q);
    free(rows);
    free(given);
    vecset_close(v);
    cli_parser_release(&p);
    return rc;
}
