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

struct map_cmd_args {
    struct common_data da;
    struct common_fit fa;
    struct map_args ma;
    const char *out;
};

#define A struct map_cmd_args
static const struct cli_opt opts[] = {
    CLI_OPT_STR("output", 'o', "<file>", "where to write the SVG drawing (default: - for stdout)", A, out),
    MAP_OPTIONS(A, ma),
    COMMON_OPT_VECTORS("packed vector set (.vecs); needed unless --pool bow", A, fa),
    COMMON_OPT_POOL("mean | tfidf | sif | bow (default: tfidf)", A, fa),
    COMMON_OPT_SUBLINEAR_TF(A, fa),
    COMMON_DATA_OPTIONS(A, da),
    COMMON_OPT_SEED("seed of the map's random start (default: 1)", A, da),
    CLI_OPT_QUIET("no notes on stderr"),
    CLI_OPT_END
};
#undef A

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

int cmd_map(int argc, char **argv)
{
    struct map_cmd_args a;
    memset(&a, 0, sizeof a);
    common_data_init(&a.da);
    common_fit_init(&a.fa);
    map_args_init(&a.ma);
    a.out = "-";
    const char *data = NULL;
    int rc = cli_parse_exact(&cmd_map_info, argc, argv, &a, 1, &data, "map takes one data file");
    if (rc != CLI_END)
        return rc;
    rc = ERR_OK;
    struct map_args *ma = &a.ma;
    const char *out = a.out;
    ma->tp.seed = a.da.seed;

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
    const char *ins[] = { data, a.fa.vectors };
    if (ofile_check_distinct(out, ins, 2, &e) < 0 || (ma->coords && ofile_check_distinct(ma->coords, ins, 2, &e) < 0))
        goto fail;
    if (ma->coords && strcmp(ma->coords, "-") != 0 && ofile_check_distinct(ma->coords, &out, 1, &e) < 0)
        goto fail;
    int labelled = 0;
    if (common_load_maybe_labelled(&c, data, &a.da, a.da.label_col, &labelled, &e) < 0)
        goto fail;
    cli_warn_too_long(data, c.too_long_line, c.too_long);
    if (c.ds.n < 4) {
        err_set(&e, data, 0, "a map needs at least 4 rows, the data has %zu", c.ds.n);
        goto fail;
    }
    if (common_open_vectors(&a.fa, &vs, &e) < 0)
        goto fail;
    rows = common_all_rows(&c);
    if (!(f = features_fit(&a.fa.spec.feat, &c.docs, rows, c.ds.n, vs, &e)))
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
    if (tsne_run(dense, N, D, &ma->tp, Y, &e) < 0)
        goto fail;

    titles = xcalloc(N, sizeof *titles);
    for (size_t r = 0; r < N; r++)
        titles[r] = excerpt_new(c.ds.text[r], 200);
    char what[512];
    if (vs)
        snprintf(what, sizeof what, "features: %s pooling of %.400s", features_pool_name(a.fa.spec.feat.pool),
                 vecset_path(vs));
    else
        snprintf(what, sizeof what, "features: TF-IDF bag of words");
    caption = map_caption_new(SVGPLOT_MAP_CAPTION, ma, N, what);
    /* Both files are written before either is committed. */
    if (!(o = ofile_open(out, &e)) || (ma->coords && !(oc = ofile_open(ma->coords, &e))))
        goto fail;
    if (svgplot_scatter(ofile_fp(o), Y, N, c.ds.y, (const char *const *)c.ds.labels, c.ds.nlabels,
                        (const char *const *)titles, caption, &e) < 0)
        goto fail;
    if (oc)
        map_write_coords(ofile_fp(oc), "label", (const char *const *)c.ds.label, Y, N);
    if (map_commit(&o, &oc, &e) < 0)
        goto fail;
    if (st.empty_rows)
        cli_warn("%s: %zu rows had no word with a %s and sit together on the map", data, st.empty_rows,
                 vs ? "vector" : "column");
    cli_note("mapped %zu rows (%zu features each); seed %llu", N, D, (unsigned long long)ma->tp.seed);
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
    return rc;
}
