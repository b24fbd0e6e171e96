/* cmd_demo.c -- `vecsift demo`: the whole job on the bundled, invented
 * support inbox, by running the same commands a team would run, each
 * printed before it runs so the demo doubles as a walkthrough. */
#include <cjson/cJSON.h>
#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "commands.h"
#include "common.h"
#include "vecsift/err.h"
#include "vecsift/jsonv.h"
#include "vecsift/xalloc.h"

#ifndef VECSIFT_SOURCE_DIR
#define VECSIFT_SOURCE_DIR "."
#endif
#ifndef VECSIFT_DATA_DIR
#define VECSIFT_DATA_DIR "/usr/local/share/vecsift"
#endif

static const struct cli_opt opts[] = {
    { "data", 'd', "<dir>", "the demo inbox (default: datasets/inbox, else the installed copy)" },
    { "out", 'o', "<dir>", "where to write vectors, reports and routed rows (default: demo-output)" },
    { "models", 'm', "<dir>", "where to write the model (default: models)" },
    RUN_OPTIONS,
    { NULL, 0, NULL, NULL }
};

const struct cli_cmd cmd_demo_info = {
    "demo", "[options]",
    "the whole job on the bundled, invented support inbox",
    opts,
    "Learns word vectors from the inbox's unlabelled tickets, cross-validates a\n"
    "classifier on the labelled ones, compares it with the bag-of-words\n"
    "baseline, picks the confidence cut-off for 95% precision, trains the model,\n"
    "routes the incoming tickets and writes an HTML report.  Every step is an\n"
    "ordinary vecsift command, printed before it runs.  The inbox, its company,\n"
    "customers and tickets are invented."
};

static int is_dir(const char *p)
{
    struct stat st;
    return stat(p, &st) == 0 && S_ISDIR(st.st_mode);
}

static int make_dir(const char *p, struct err *e)
{
    if (mkdir(p, 0777) != 0 && errno != EEXIST)
        return err_io(e, p, 0, "cannot create directory: %s", strerror(errno));
    return 0;
}

/* Run one command given as a NULL-terminated list of words, echoing it. */
static int step(int (*fn)(int, char **), ...)
{
    char *argv[64];
    int argc = 0;
    va_list ap;
    va_start(ap, fn);
    for (char *w; argc < 63 && (w = va_arg(ap, char *));)
        argv[argc++] = w;
    va_end(ap);
    argv[argc] = NULL;
    printf("\n$ vecsift");
    for (int i = 0; i < argc; i++)
        printf(" %s", argv[i]);
    printf("\n");
    fflush(stdout);
    int rc = fn(argc, argv);
    fflush(stdout);
    return rc;
}

/* The cut-off evaluate advised (its review_below, the number it printed),
 * from its JSON. */
static int read_cut(const char *path, double *cut, double *cover, double *macro, struct err *e)
{
    cJSON *root = jsonv_load(path, "evaluation", (size_t)1 << 30, e);
    if (!root)
        return -1;
    struct jsonv_ctx c = { path, "threshold", e };
    const cJSON *th = cJSON_GetObjectItemCaseSensitive(root, "threshold");
    const cJSON *po = cJSON_GetObjectItemCaseSensitive(root, "pooled");
    const cJSON *co = th ? cJSON_GetObjectItemCaseSensitive(th, "review_below") : NULL;
    int rc = 0;
    *cut = -1;
    if (co && cJSON_IsNumber(co)) {
        if (jsonv_num(&c, th, "review_below", 0, 1, cut) < 0 || jsonv_num(&c, th, "coverage", 0, 1, cover) < 0)
            rc = -1;
    }
    struct jsonv_ctx cp = { path, "pooled", e };
    if (rc == 0 && jsonv_num(&cp, po, "macro_f1", 0, 1, macro) < 0)
        rc = -1;
    cJSON_Delete(root);
    return rc;
}

int cmd_demo(int argc, char **argv)
{
    const struct cli_cmd *cmd = &cmd_demo_info;
    struct data_args da;
    data_args_init(&da);
    const char *data = NULL, *out = "demo-output", *models = "models";
    struct cli_parser p;
    cli_parser_init(&p, cmd, argc, argv);
    int i;
    const char *val;
    while ((i = cli_next(&p, &val)) >= 0) {
        const char *name = opt_name(cmd, i);
        int t = data_args_option(&da, cmd, name, val);
        if (t < 0)
            break;
        if (t > 0)
            continue;
        if (strcmp(name, "data") == 0)
            data = val;
        else if (strcmp(name, "out") == 0)
            out = val;
        else if (strcmp(name, "models") == 0)
            models = val;
    }
    int npos = p.npos;
    cli_parser_release(&p);
    if (i != CLI_END)
        return i == CLI_HELP ? ERR_OK : ERR_INPUT;
    if (npos)
        return cli_usage(cmd, "demo takes no file arguments");

    struct err e = ERR_INIT;
    if (!data) {
        if (is_dir("datasets/inbox"))
            data = "datasets/inbox";
        else if (is_dir(VECSIFT_SOURCE_DIR "/datasets/inbox"))
            data = VECSIFT_SOURCE_DIR "/datasets/inbox";
        else
            data = VECSIFT_DATA_DIR "/inbox";
    }
    if (!is_dir(data)) {
        err_set(&e, data, 0, "the demo inbox is not here");
        err_hint(&e, "run from the source tree, or pass --data DIR");
        return cli_fail(&e);
    }
    if (make_dir(out, &e) < 0 || make_dir(models, &e) < 0)
        return cli_fail(&e);

    char labelled[4096], unlabelled[4096], incoming[4096], vecs[4096], report[4096], json[4096], oof[4096],
        routed[4096], model[4096], cmpreport[4096], threads[16], seed[32];
    snprintf(labelled, sizeof labelled, "%s/labelled.csv", data);
    snprintf(unlabelled, sizeof unlabelled, "%s/unlabelled.csv", data);
    snprintf(incoming, sizeof incoming, "%s/incoming.csv", data);
    snprintf(vecs, sizeof vecs, "%s/inbox.vecs", out);
    snprintf(report, sizeof report, "%s/report.html", out);
    snprintf(cmpreport, sizeof cmpreport, "%s/comparison.html", out);
    snprintf(json, sizeof json, "%s/evaluation.json", out);
    snprintf(oof, sizeof oof, "%s/out-of-fold.csv", out);
    snprintf(routed, sizeof routed, "%s/incoming-routed.csv", out);
    snprintf(model, sizeof model, "%s/inbox.json", models);
    snprintf(threads, sizeof threads, "%d", da.threads);
    snprintf(seed, sizeof seed, "%llu", (unsigned long long)da.seed);

    printf("vecsift demo: Pebblewick Home Gadgets' support inbox (invented data: the company, its\n"
           "customers and every ticket are made up). Data in %s, results in %s.\n", data, out);
    int rc;
    rc = step(cmd_vectors, "vectors", "learn", unlabelled, "--text-col", "subject", "--text-col", "body", "-o", vecs,
              "--threads", threads, "--seed", seed, "--quiet", NULL);
    if (rc)
        return rc;
    rc = step(cmd_evaluate, "evaluate", labelled, "--text-col", "subject", "--text-col", "body", "--label-col",
              "queue", "--vectors", vecs, "--pool", "tfidf", "--target-precision", "0.95", "--json", json,
              "--predictions", oof, "--report", report, "--threads", threads, "--seed", seed, NULL);
    if (rc)
        return rc;
    double cut = -1, cover = 0, macro = 0;
    if (read_cut(json, &cut, &cover, &macro, &e) < 0)
        return cli_fail(&e);
    printf("\nThe learned vectors against the bag-of-words baseline, on the same folds:\n");
    rc = step(cmd_compare, "compare", labelled, "--text-col", "subject", "--text-col", "body", "--label-col",
              "queue", "--vectors", vecs, "--pool", "tfidf", "--report", cmpreport, "--threads", threads, "--seed",
              seed, "--quiet", NULL);
    if (rc)
        return rc;
    rc = step(cmd_train, "train", labelled, "--text-col", "subject", "--text-col", "body", "--label-col", "queue",
              "--vectors", vecs, "--pool", "tfidf", "--evaluation", json, "-o", model, "--seed", seed, NULL);
    if (rc)
        return rc;
    rc = step(cmd_predict, "predict", model, incoming, "-o", routed, "--top", "2", "--explain", "3", "--threads",
              threads, NULL);
    if (rc)
        return rc;

    printf("\nWhat was made:\n"
           "  %-32s word vectors learned from %s\n"
           "  %-32s the cross-validated report (open it in a browser)\n"
           "  %-32s learned vectors against the bag-of-words baseline\n"
           "  %-32s every figure as JSON\n"
           "  %-32s out-of-fold predictions, one row per ticket and repeat\n"
           "  %-32s the trained model\n"
           "  %-32s the incoming tickets with predicted, confidence and route\n",
           vecs, unlabelled, report, cmpreport, json, oof, model, routed);
    printf("\nReading: out of fold, macro F1 was %.3f with learned vectors. ", macro);
    if (cut >= 0) {
        char cuts[40];
        cut_format(cut, cuts, sizeof cuts);
        printf("Routing automatically only at confidence %s or above kept %.0f%% of tickets at 95%% precision;\n"
               "the rest go to a person (route 'review').\n",
               cuts, 100 * cover);
    }
    else
        printf("No cut-off reached 95%% precision: every ticket goes to a person.\n");
    printf("Cautions: a classifier misroutes some tickets; keep a person on the review route and watch each\n"
           "queue's precision. Vectors and models carry the associations and the words of the texts they\n"
           "were learned from: treat them as personal data under the applicable law and your policy.\n");
    return ERR_OK;
}
