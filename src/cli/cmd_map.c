/* cmd_map.c -- `vecsift map`: the texts of a CSV file drawn on a 2-D map.
 *
 * The features are what a classifier would see (pooled document vectors, or
 * the bag of words), fitted on every row: nothing is held out because
 * nothing is scored.  t-SNE (tsne.h) places them in two dimensions and
 * svgplot.h draws one self-contained SVG, coloured by label when the data
 * has labels, each point carrying an excerpt of its text as a tooltip.
 * Same data, options and --seed give the same file byte for byte.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "commands.h"
#include "common.h"
#include "excerpt.h"
#include "map_out.h"
#include "vecsift/err.h"
#include "vecsift/fmat.h"
#include "vecsift/ofile.h"
#include "vecsift/svgplot.h"
#include "vecsift/vecset.h"
#include "vecsift/xalloc.h"

/* Dense t-SNE input cap (rows x columns): a bag of words over many rows
 * would need gigabytes as a dense matrix. */
#define MAX_CELLS ((size_t)64 * 1024 * 1024)

static const struct cli_opt opts[] = {
    { "output", 'o', "<file>", "where to write the SVG drawing (default: - for stdout)" },
    MAP_OPTIONS,
    { "vectors", 'v', "<file>", "packed vector set (.vecs); needed unless --pool bow" },
    { "pool", 'p', "<how>", "mean | tfidf | sif | bow (default: tfidf)" },
    { "sublinear-tf", 0, NULL, "use 1 + ln(tf) instead of raw term counts" },
    DATA_OPTIONS,
    { "seed", 's', "<n>", "seed of the map's random start (default: 1)" },
    { "quiet", 'q', NULL, "no notes on stderr" },
    { NULL, 0, NULL, NULL }
};

const struct cli_cmd cmd_map_info = {
    "map", "[options] DATA.csv -o MAP.svg",
    "draw the texts on a 2-D map (t-SNE), coloured by label",
    opts,
    "Texts with similar features land close together, so labels that blur\n"
    "into each other show as mixed colours.  Only what is near can be read:\n"
    "the distances between far-apart groups, and their sizes, mean little.\n"
    "The label column is used when present (--label-col, default 'label');\n"
    "without one every point has one colour.  Hover over a point to read its\n"
    "text.  --coords writes the 2-D coordinates for other tools."
};

/* 1 when the CSV file has column 'name', 0 when not, -1 on error. */
static int has_column(const char *path, const struct csv_options *co, const char *name, struct err *e)
{
    csv_reader *r = csv_open(path, co, e);
    if (!r)
        return -1;
    int has = csv_col(r, name) >= 0;
    csv_close(r);
    return has;
}

int cmd_map(int argc, char **argv)
{
    const struct cli_cmd *cmd = &cmd_map_info;
    struct data_args da;
    struct fit_args fa;
    struct map_args ma;
    data_args_init(&da);
    fit_args_init(&fa);
    map_args_init(&ma);
    const char *out = "-";
    struct cli_parser p;
    cli_parser_init(&p, cmd, argc, argv);
    int i, rc = ERR_OK;
    const char *val;
    while ((i = cli_next(&p, &val)) >= 0) {
        const char *name = opt_name(cmd, i);
        int t = data_args_option(&da, cmd, name, val);
        if (t == 0)
            t = fit_args_option(&fa, cmd, name, val);
        if (t == 0)
            t = map_args_option(&ma, cmd, name, val);
        if (t < 0)
            break;
        if (t == 0 && strcmp(name, "output") == 0)
            out = val;
    }
    if (i != CLI_END)
        rc = i == CLI_HELP ? ERR_OK : ERR_INPUT;
    else if (p.npos != 1)
        rc = cli_usage(cmd, "map takes one data file");
    if (i != CLI_END || rc != ERR_OK) {
        cli_parser_release(&p);
        return rc;
    }
    const char *data = p.pos[0];
    ma.tp.seed = da.seed;

    struct err e = ERR_INIT;
    struct vecset *vs = NULL;
    struct corpus c;
    memset(&c, 0, sizeof c);
    featurizer *f = NULL;
    struct fmat X = FMAT_INIT;
    size_t *rows = NULL;
    double *dense = NULL, *Y = NULL;
    char **titles = NULL, *caption = NULL;
    ofile *o = NULL, *oc = NULL;
    const char *ins[] = { data, fa.vectors };
    if (ofile_check_distinct(out, ins, 2, &e) < 0 || (ma.coords && ofile_check_distinct(ma.coords, ins, 2, &e) < 0))
        goto fail;
    if (ma.coords && strcmp(ma.coords, "-") != 0 && ofile_check_distinct(ma.coords, &out, 1, &e) < 0)
        goto fail;
    struct dataset_options dopt;
    data_args_dataset(&da, 1, &dopt);
    int labelled = has_column(data, &da.csv, dopt.label_col, &e);
    if (labelled < 0)
        goto fail;
    if (!labelled && da.label_col) {
        err_set(&e, data, 1, "no column '%s'", da.label_col);
        goto fail;
    }
    data_args_dataset(&da, labelled, &dopt);
    if (corpus_load(&c, data, &dopt, &da.text, &e) < 0)
        goto fail;
    cli_warn_too_long(data, c.too_long_line, c.too_long);
    if (c.ds.n < 4) {
        err_set(&e, data, 0, "a map needs at least 4 rows, the data has %zu", c.ds.n);
        goto fail;
    }
    if (fit_args_open_vectors(&fa, &vs, &e) < 0)
        goto fail;
    rows = xcalloc(c.ds.n, sizeof *rows);
    for (size_t r = 0; r < c.ds.n; r++)
        rows[r] = r;
    if (!(f = features_fit(&fa.spec.feat, &c.docs, rows, c.ds.n, vs, &e)))
        goto fail;
    struct features_stats st = { 0, 0, 0 };
    features_transform(f, &c.docs, rows, c.ds.n, &X, &st);
    size_t N = c.ds.n, D = features_dim(f);
    if (D == 0 || D > MAX_CELLS / N) {
        err_set(&e, data, 0, "%zu rows x %zu features is too large to map", N, D);
        err_hint(&e, "map pooled vectors (--vectors with --pool tfidf) instead of the bag of words");
        goto fail;
    }
    dense = xcalloc(xmul(N, D), sizeof *dense);
    for (size_t r = 0; r < N; r++)
        fmat_axpy(&X, r, 1.0, dense + r * D);
    Y = xcalloc(xmul(N, 2), sizeof *Y);
    if (tsne_run(dense, N, D, &ma.tp, Y, &e) < 0)
        goto fail;

    titles = xcalloc(N, sizeof *titles);
    for (size_t r = 0; r < N; r++)
        titles[r] = excerpt_new(c.ds.text[r], 200);
    char what[512];
    if (vs)
        snprintf(what, sizeof what, "features: %s pooling of %.400s", features_pool_name(fa.spec.feat.pool),
                 vecset_path(vs));
    else
        snprintf(what, sizeof what, "features: TF-IDF bag of words");
    caption = map_caption_new(SVGPLOT_MAP_CAPTION, &ma, N, what);
    /* Both files are written before either is committed. */
    if (!(o = ofile_open(out, &e)) || (ma.coords && !(oc = ofile_open(ma.coords, &e))))
        goto fail;
    if (svgplot_scatter(ofile_fp(o), Y, N, c.ds.y, (const char *const *)c.ds.labels, c.ds.nlabels,
                        (const char *const *)titles, caption, &e) < 0)
        goto fail;
    if (oc)
        map_write_coords(ofile_fp(oc), "label", (const char *const *)c.ds.label, Y, N);
    int bad = ofile_commit(o, &e) < 0;
    o = NULL;
    if (bad || (oc && ofile_commit(oc, &e) < 0)) {
        oc = NULL;
        goto fail;
    }
    oc = NULL;
    if (st.empty_rows)
        cli_warn("%s: %zu rows had no word with a %s and sit together on the map", data, st.empty_rows,
                 vs ? "vector" : "column");
    cli_note("mapped %zu rows (%zu features each); seed %llu", N, D, (unsigned long long)ma.tp.seed);
    goto done;
fail:
    rc = cli_fail(&e);
done:
    ofile_abort(o);
    ofile_abort(oc);
    for (size_t r = 0; titles && r < c.ds.n; r++)
        free(titles[r]);
    free(titles);
    free(caption);
    free(Y);
    free(dense);
    free(rows);
    fmat_release(&X);
    features_free(f);
    corpus_release(&c);
    vecset_close(vs);
    cli_parser_release(&p);
    return rc;
}
