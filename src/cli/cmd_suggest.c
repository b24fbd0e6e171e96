/* cmd_suggest.c -- `vecsift suggest`: the unlabelled rows most worth
 * labelling next.
 *
 * Uncertainty sampling (Lewis and Gale 1994, "A Sequential Algorithm for
 * Training Text Classifiers", SIGIR): rows the model is least sure about are
 * asked first, by the margin between its two most probable labels or by the
 * entropy of its probabilities.  Picks are greedy in that order, skipping a
 * row whose features have a cosine above --similar with a row already
 * picked, so one template repeated a hundred times costs one label, not a
 * hundred.  The output is the picked rows, ready to fill in.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "commands.h"
#include "common.h"
#include "suggest_pool.h"
#include "vecsift/csv.h"
#include "vecsift/err.h"
#include "vecsift/fmat.h"
#include "vecsift/model.h"
#include "vecsift/ofile.h"
#include "vecsift/pipeline.h"
#include "vecsift/vecset.h"
#include "vecsift/xalloc.h"

static const struct cli_opt opts[] = {
    { "count", 'n', "<n>", "how many rows to pick, >= 1 (required)" },
    { "output", 'o', "<file>", "where to write the picked rows (default: - for stdout)" },
    { "by", 0, "<how>", "margin: 1 - (p1 - p2) | entropy: of the probabilities, over ln K (default: margin)" },
    { "similar", 0, "<x>", "skip a row whose cosine with a picked row is above x, in [0, 1] (default: 0.95)" },
    { "vectors", 'v', "<file>", "the model's vector set, when it moved (fingerprint must match)" },
    { "text-col", 0, "<name>", "text column(s) to read (default: the model's)" },
    { "encoding", 0, "<name>", "utf-8 | windows-1252 | latin-1 (default: utf-8)" },
    { "replace-invalid", 0, NULL, "replace invalid UTF-8 by U+FFFD instead of stopping" },
    { "quiet", 'q', NULL, "no notes on stderr" },
    { NULL, 0, NULL, NULL }
};

const struct cli_cmd cmd_suggest_info = {
    "suggest", "[options] MODEL.json POOL.csv -n N [-o TO_LABEL.csv]",
    "pick the unlabelled rows most worth labelling next",
    opts,
    "Scores every pool row with the model and picks the N it is least sure\n"
    "about, skipping near-duplicates of rows already picked (cosine of the\n"
    "model's feature rows).  Rows with no known word are never picked.\n"
    "Output: the pool's columns, then an empty column named like the model's\n"
    "label column (to fill in), 'why', 'uncertainty' (0 sure .. 1 unsure) and\n"
    "'best_guess', most uncertain first."
};

enum { BY_MARGIN, BY_ENTROPY };

struct cand {
    size_t row;
    double u;
};

static int by_uncertainty(const void *a, const void *b)
{
    const struct cand *x = a, *y = b;
    if (x->u != y->u)
        return x->u > y->u ? -1 : 1;
    return (x->row > y->row) - (x->row < y->row);
}

/* Labels by probability, ties by label order: order[0] is the best guess. */
static void rank_labels(const double *p, size_t K, int *order)
{
    for (size_t k = 0; k < K; k++)
        order[k] = (int)k;
    for (size_t a = 1; a < K; a++)
        for (size_t b = a; b > 0 && p[order[b]] > p[order[b - 1]]; b--) {
            int t = order[b];
            order[b] = order[b - 1];
            order[b - 1] = t;
        }
}

/* The uncertainty of one row in [0, 1], and the reason in words. */
static double uncertainty(const double *p, size_t K, int by, char *const *labels, int *order, char *why,
                          size_t wlen)
{
    rank_labels(p, K, order);
    if (by == BY_MARGIN) {
        double margin = p[order[0]] - p[order[1]];
        snprintf(why, wlen, "margin %.3f between %s (%.2f) and %s (%.2f)", margin, labels[order[0]], p[order[0]],
                 labels[order[1]], p[order[1]]);
        return 1 - margin;
    }
    double h = 0;
    for (size_t k = 0; k < K; k++)
        if (p[k] > 0)
            h -= p[k] * log(p[k]);
    h /= log((double)K);
    int n = snprintf(why, wlen, "entropy %.3f of 1 across %s (%.2f), %s (%.2f)", h, labels[order[0]], p[order[0]],
                     labels[order[1]], p[order[1]]);
    if (K > 2 && n > 0 && (size_t)n < wlen)
        snprintf(why + n, wlen - (size_t)n, ", %s (%.2f)", labels[order[2]], p[order[2]]);
    return h;
}

int cmd_suggest(int argc, char **argv)
{
    const struct cli_cmd *cmd = &cmd_suggest_info;
    struct data_args da;
    data_args_init(&da);
    const char *out = "-", *vectors = NULL;
    long count = 0;
    double similar = 0.95;
    int by = BY_MARGIN, i, rc = ERR_OK;
    struct cli_parser p;
    cli_parser_init(&p, cmd, argc, argv);
    const char *val;
    while ((i = cli_next(&p, &val)) >= 0) {
        const char *name = opt_name(cmd, i);
        int t = data_args_option(&da, cmd, name, val);
        if (t < 0)
            break;
        if (t > 0)
            continue;
        if (strcmp(name, "output") == 0)
            out = val;
        else if (strcmp(name, "vectors") == 0)
            vectors = val;
        else if (strcmp(name, "count") == 0 && cli_long(cmd, name, val, 1, 100000000, &count) < 0)
            break;
        else if (strcmp(name, "similar") == 0 && cli_double(cmd, name, val, 0, 1, &similar) < 0)
            break;
        else if (strcmp(name, "by") == 0) {
            if (strcmp(val, "margin") == 0 || strcmp(val, "entropy") == 0)
                by = strcmp(val, "margin") == 0 ? BY_MARGIN : BY_ENTROPY;
            else {
                cli_usage(cmd, "option '--by' takes margin or entropy, not '%s'", val);
                break;
            }
        }
    }
    if (i != CLI_END)
        rc = i == CLI_HELP ? ERR_OK : ERR_INPUT;
    else if (p.npos != 2)
        rc = cli_usage(cmd, "suggest takes a model file and a pool file");
    else if (count == 0)
        rc = cli_usage(cmd, "say how many rows to pick with -n N");
    if (i != CLI_END || rc != ERR_OK) {
        cli_parser_release(&p);
        return rc;
    }
    const char *model_path = p.pos[0], *in = p.pos[1];

    struct err e = ERR_INIT;
    struct model m = MODEL_INIT;
    struct vecset *vs = NULL;
    struct suggest_pool pl;
    memset(&pl, 0, sizeof pl);
    struct cand *cands = NULL;
    size_t *picked = NULL;
    double *picked_u = NULL;
    char **why = NULL;
    int *order = NULL;
    ofile *o = NULL;
    size_t ncand = 0, npicked = 0, skipped = 0, empty = 0;
    const char *ins[] = { model_path, in, vectors };
    const char *reserved[4] = { NULL, "why", "uncertainty", "best_guess" };
    if (ofile_check_distinct(out, ins, 3, &e) < 0)
        goto fail;
    if (model_load(&m, model_path, vectors, &vs, &e) < 0)
        goto fail;
    reserved[0] = m.label_col;
    if (suggest_pool_load(&pl, in, &m, &da, reserved, 4, &e) < 0)
        goto fail;
    cands = xcalloc(pl.n, sizeof *cands);
    why = xcalloc(pl.n, sizeof *why);
    order = xcalloc(m.k, sizeof *order);
    char buf[512];
    for (size_t r = 0; r < pl.n; r++) {
        if (pl.empty[r]) {
            empty++;
            continue;
        }
        cands[ncand].row = r;
        cands[ncand++].u = uncertainty(pl.P + r * m.k, m.k, by, m.labels, order, buf, sizeof buf);
        why[r] = xstrdup(buf);
    }
    qsort(cands, ncand, sizeof *cands, by_uncertainty);
    /* Greedy: most uncertain first, unless too close to a row already picked. */
    size_t cap = (size_t)count < ncand ? (size_t)count : ncand + 1;
    picked = xcalloc(cap, sizeof *picked);
    picked_u = xcalloc(cap, sizeof *picked_u);
    for (size_t c = 0; c < ncand && npicked < (size_t)count; c++) {
        size_t r = cands[c].row, q = 0;
        for (; q < npicked; q++) {
            size_t s = picked[q];
            double den = pl.norm[r] * pl.norm[s];
            if (den > 0 && suggest_pool_dot(&pl.X, r, s) / den > similar)
                break;
        }
        if (q < npicked) {
            skipped++;
            continue;
        }
        picked[npicked] = r;
        picked_u[npicked++] = cands[c].u;
    }

    if (!(o = ofile_open(out, &e)))
        goto fail;
    FILE *fp = ofile_fp(o);
    for (size_t c = 0; c < pl.ncols; c++) {
        csv_put(fp, pl.header[c], strlen(pl.header[c]), 1);
        fputc(',', fp);
    }
    csv_put(fp, m.label_col, strlen(m.label_col), 1);
    fputs(",why,uncertainty,best_guess\r\n", fp);
    for (size_t q = 0; q < npicked; q++) {
        size_t r = picked[q];
        for (size_t c = 0; c < pl.ncols; c++) {
            const char *s = pl.cells[r * pl.ncols + c];
            csv_put(fp, s, strlen(s), 1);
            fputc(',', fp);
        }
        fputc(',', fp); /* the label, to fill in */
        csv_put(fp, why[r], strlen(why[r]), 1);
        rank_labels(pl.P + r * m.k, m.k, order);
        fprintf(fp, ",%.4f,", picked_u[q]);
        csv_put(fp, m.labels[order[0]], strlen(m.labels[order[0]]), 1);
        fputs("\r\n", fp);
    }
    if (ofile_commit(o, &e) < 0) {
        o = NULL;
        goto fail;
    }
    o = NULL;
    cli_note("picked %zu of %zu pool rows by %s; skipped %zu near-duplicates (cosine > %.2f) and %zu rows "
             "with no known word", npicked, pl.n, by == BY_MARGIN ? "margin" : "entropy", skipped, similar, empty);
    if (npicked < (size_t)count)
        cli_warn("asked for %ld rows, the pool had only %zu to offer", count, npicked);
    goto done;
fail:
    rc = cli_fail(&e);
done:
    ofile_abort(o);
    for (size_t r = 0; why && r < pl.n; r++)
        free(why[r]);
    free(why);
    free(order);
    free(picked);
    free(picked_u);
    free(cands);
    suggest_pool_release(&pl);
    model_release(&m);
    vecset_close(vs);
    cli_parser_release(&p);
    return rc;
}
