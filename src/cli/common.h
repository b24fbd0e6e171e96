/* common.h -- options and steps shared by the commands that read data or
 * fit pipelines: --text-col, --label-col, --encoding ..., --vectors,
 * --pool, --classifier, --C ..., --folds, --repeats, --search.
 *
 * The options come as rows for a command's table (cli.h): a command keeps
 * a struct common_data (and a struct common_fit, or a struct common_cv for
 * cross-validation) in its own args struct and splices the groups below
 * into its table with the struct's type and the member's name, e.g.
 *     COMMON_DATA_OPTIONS(struct audit_args, cv.da)
 * so every shared option is spelt, defaulted, parsed and checked here once.
 * Single rows (COMMON_OPT_*) are for the commands that keep an option but
 * word its help their own way.
 */
#ifndef VECSIFT_CLI_COMMON_H
#define VECSIFT_CLI_COMMON_H

#include <stddef.h>
#include <stdint.h>

#include "cli.h"
#include "vecsift/corpus.h"
#include "vecsift/csv.h"
#include "vecsift/cv.h"
#include "vecsift/pipeline.h"
#include "vecsift/text.h"

struct vecset;

#define COMMON_MAX_TEXT_COLS 32

/* What the data options set (and --seed, --threads). */
struct common_data {
    const char *text_cols[COMMON_MAX_TEXT_COLS];
    size_t ntext;
    const char *label_col;
    const char *group_col;
    struct csv_options csv;
    struct text_options text;
    int threads;
    uint64_t seed;
};

/* What the pipeline options set. */
struct common_fit {
    const char *vectors;
    struct pipeline_spec spec;
};

/* Everything a cross-validating command shares. */
struct common_cv {
    struct common_data da;
    struct common_fit fa;
    struct cv_params cp;
};

/* ---- the option parsers (cli_take_fn) ---- */

cli_take_fn common_take_text_col;     /* struct common_data: append to text_cols (at most 32) */
cli_take_fn common_take_encoding;     /* enum csv_encoding */
cli_take_fn common_take_keep_emails;  /* struct text_options: e-mails and URLs kept */
cli_take_fn common_take_pool;         /* enum features_pool */
cli_take_fn common_take_classifier;   /* enum pipeline_classifier */
cli_take_fn common_take_class_weight; /* int: 1 balanced, 0 none */

/* ---- single rows: T the args struct, D its struct common_data member,
 * F its struct common_fit member ---- */

#define COMMON_OPT_TEXT_COL(HELP, T, D) \
    CLI_OPT_FN("text-col", 0, "<name>", HELP, T, D, struct common_data, common_take_text_col)
#define COMMON_OPT_LABEL_COL(T, D) \
    CLI_OPT_STR("label-col", 0, "<name>", "column holding the label (default: label)", T, D.label_col)
#define COMMON_OPT_GROUP_COL(T, D) \
    CLI_OPT_STR("group-col", 'g', "<name>", \
                "keep rows sharing this column's value (a customer, a thread) in one fold", T, D.group_col)
#define COMMON_OPT_ENCODING(HELP, T, D) \
    CLI_OPT_FN("encoding", 0, "<name>", HELP, T, D.csv.encoding, enum csv_encoding, common_take_encoding)
#define COMMON_OPT_REPLACE_INVALID(HELP, T, D) CLI_OPT_FLAG("replace-invalid", 0, HELP, T, D.csv.replace_invalid)
#define COMMON_OPT_KEEP_ACCENTS(HELP, T, D) CLI_OPT_FLAG("keep-accents", 0, HELP, T, D.text.keep_accents)
#define COMMON_OPT_MASK_NUMBERS(HELP, T, D) CLI_OPT_FLAG("mask-numbers", 0, HELP, T, D.text.mask_number)
#define COMMON_OPT_KEEP_EMAILS(HELP, T, D) \
    CLI_OPT_FN("keep-emails", 0, NULL, HELP, T, D.text, struct text_options, common_take_keep_emails)
#define COMMON_OPT_SEED(HELP, T, D) \
    CLI_OPT_U64("seed", 's', "<n>", HELP, T, D.seed, 0, 0x7fffffffffffffffL)
#define COMMON_OPT_THREADS(HELP, T, D) CLI_OPT_INT("threads", 't', "<n>", HELP, T, D.threads, 1, CLI_MAX_THREADS)
#define COMMON_OPT_VECTORS(HELP, T, F) CLI_OPT_STR("vectors", 'v', "<file>", HELP, T, F.vectors)
#define COMMON_OPT_POOL(HELP, T, F) \
    CLI_OPT_FN("pool", 'p', "<how>", HELP, T, F.spec.feat.pool, enum features_pool, common_take_pool)
#define COMMON_OPT_SUBLINEAR_TF(T, F) \
    CLI_OPT_FLAG("sublinear-tf", 0, "use 1 + ln(tf) instead of raw term counts", T, F.spec.feat.sublinear_tf)
#define COMMON_OPT_C(HELP, T, F) CLI_OPT_DOUBLE("C", 'C', "<x>", HELP, T, F.spec.C, 1e-9, 1e9)
#define COMMON_OPT_GAMMA(T, F) \
    CLI_OPT_DOUBLE("gamma", 0, "<x>", "svm-rbf kernel width (default: 1 / (dimensions * variance))", T, \
                   F.spec.gamma, 1e-12, 1e9)
#define COMMON_OPT_CLASS_WEIGHT(T, F) \
    CLI_OPT_FN("class-weight", 0, "<how>", "none | balanced: weight labels by n / (k * n_label) (default: none)", \
               T, F.spec.balanced, int, common_take_class_weight)
#define COMMON_OPT_MAX_ITER(T, F) \
    CLI_OPT_INT("max-iter", 0, "<n>", "logreg: L-BFGS iteration cap (default: 1000)", T, F.spec.max_iter, 1, 1000000)
#define COMMON_OPT_FOLDS(T, CP) CLI_OPT_INT("folds", 'k', "<n>", "folds, >= 2 (default: 5)", T, CP.folds, 2, 1000)
#define COMMON_OPT_REPEATS(HELP, T, CP) CLI_OPT_SIZE("repeats", 'R', "<n>", HELP, T, CP.repeats, 1, 1000)

/* ---- groups ---- */

#define COMMON_DATA_OPTIONS(T, D) \
    COMMON_OPT_TEXT_COL("column holding the text; repeat to join several (default: text)", T, D), \
    COMMON_OPT_LABEL_COL(T, D), \
    COMMON_OPT_ENCODING("utf-8 | windows-1252 | latin-1 (default: utf-8)", T, D), \
    COMMON_OPT_REPLACE_INVALID("replace invalid UTF-8 by U+FFFD instead of stopping", T, D), \
    COMMON_OPT_KEEP_ACCENTS("keep accents on Latin letters (default: cafe = café)", T, D), \
    COMMON_OPT_MASK_NUMBERS("replace numbers by a placeholder token (default: keep them)", T, D), \
    COMMON_OPT_KEEP_EMAILS("keep e-mail addresses and URLs (default: masked: personal data)", T, D)

#define COMMON_RUN_OPTIONS(T, D) \
    COMMON_OPT_SEED("seed for every random choice (default: 1)", T, D), \
    COMMON_OPT_THREADS("worker threads, 1 to 256 (default: all cores)", T, D), \
    CLI_OPT_QUIET("no progress or notes on stderr")

#define COMMON_FIT_OPTIONS(T, F) \
    COMMON_OPT_VECTORS("packed vector set (.vecs); needed unless --pool bow", T, F), \
    COMMON_OPT_POOL("mean | tfidf | sif | bow | bow+mean | bow+tfidf | bow+sif\n" \
                    "                              (default: tfidf; bow needs no vectors; bow+P: both side by side)", \
                    T, F), \
    CLI_OPT_FN("classifier", 'c', "<name>", "logreg | svm-linear | svm-rbf (default: logreg)", T, \
               F.spec.clf, enum pipeline_classifier, common_take_classifier), \
    COMMON_OPT_C("inverse regularisation strength, > 0\n" \
                 "                              (" PIPELINE_C_HELP ")", T, F), \
    COMMON_OPT_GAMMA(T, F), \
    COMMON_OPT_CLASS_WEIGHT(T, F), \
    COMMON_OPT_SUBLINEAR_TF(T, F), \
    COMMON_OPT_MAX_ITER(T, F)

/* The rows a table of a command with a struct common_cv member CV ends with. */
#define COMMON_CV_LAST_OPTIONS(T, CV) COMMON_DATA_OPTIONS(T, CV.da), COMMON_RUN_OPTIONS(T, CV.da), CLI_OPT_END

/* ---- set-up ---- */

/* Defaults: text column "text", label column "label", UTF-8, the text
 * defaults of text.h, every core, seed 1. */
void common_data_init(struct common_data *a);
/* Dataset options from the arguments; 'labelled' selects whether the label
 * column is read. */
void common_data_options(const struct common_data *a, int labelled, struct dataset_options *o);
void common_fit_init(struct common_fit *f);
/* common_data_init, common_fit_init and CV_PARAMS_INIT with 'repeats'. */
void common_cv_init(struct common_cv *a, size_t repeats);
/* After parsing: --seed and --threads reach the folds and the fit. */
void common_cv_ready(struct common_cv *a);

/* Load the labelled data file 'path' as a corpus (its label column must
 * be there).  0, or -1 with e set. */
int common_load_labelled(struct corpus *c, const char *path, const struct common_data *a, struct err *e);

/* Load 'path' as a corpus whose label column is read when the file has it
 * (the named one, else "label"); a label column the user named (asked)
 * must exist.  *labelled says which.  0, or -1 with e set. */
int common_load_maybe_labelled(struct corpus *c, const char *path, struct common_data *a, const char *asked,
                               int *labelled, struct err *e);

/* The rows of c, 0 .. N-1, for fitting or transforming every one (a new
 * array of at least one entry; the caller frees it). */
size_t *common_all_rows(const struct corpus *c);

/* Errors from fitting (features_fit, pipeline_fit) cannot know which file
 * the rows came from: prefix 'path' unless the message already starts with
 * it, keeping the code and the hint, so every bad-input message names a file. */
void common_name_file(struct err *e, const char *path);

/* For the commands that cross-validate: keep freed blocks in the process
 * for the next fold instead of returning them to the system (allocation
 * placement only, never a result). */
void common_keep_freed_memory(void);

/* With a group column: every row's group id (rows with the same value share
 * one), set as cp->group and cp->n_groups; the caller frees the array.
 * Without one: NULL, and cp is left as it was. */
int *common_cv_groups(struct cv_params *cp, const struct corpus *c);

/* Open the vector set when the pooling needs one (error when missing). */
int common_open_vectors(const struct common_fit *f, struct vecset **vs, struct err *e);

/* Online cores, 1 to CLI_MAX_THREADS (cli_default_threads). */
int common_cores(void);

/* A confidence cut-off as every command prints it: the shortest decimal
 * with at least three places that reads back as 'p' (evaluate's advice
 * 0.884 stays "0.884", 0.9 is "0.900", 0.8841 is "0.8841"). */
void common_cut_format(double p, char *buf, size_t n);

#endif
