/* cmd_vectors.c -- 'vecsift vectors VERB': dispatch to a verb from its own
 * table, and the helpers the verbs share (thread default, word lookup, the
 * neighbour table).  The verbs live in cmd_vectors_*.c. */
#include "commands.h"
#include "cmd_vectors.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "vecsift/err.h"
#include "vecsift/text.h"
#include "vecsift/vecset.h"

/* One row per verb, alphabetical: its description and its entry point. */
static const struct verb {
    const struct cli_cmd *info;
    int (*run)(int argc, char **argv);
} verbs[] = {
    { &vectors_analogy_info, vectors_analogy },
    { &vectors_coverage_info, vectors_coverage },
    { &vectors_export_info, vectors_export },
    { &vectors_info_info, vectors_info },
    { &cmd_vectors_learn_info, cmd_vectors_learn }, /* src/cli/cmd_vectors_learn.c */
    { &vectors_map_info, vectors_map },
    { &vectors_near_info, vectors_near },
    { &vectors_pack_info, vectors_pack },
};
#define NVERBS (sizeof verbs / sizeof verbs[0])

const struct cli_cmd cmd_vectors_info = {
    "vectors", "<verb> [options] [arguments]",
    "word vector sets: pack a text file, learn from text, inspect, query neighbours, export",
    NULL, NULL,
};

static void list_verbs(FILE *fp)
{
    fprintf(fp, "usage: vecsift vectors <verb> [options] [arguments]\n\n%s\n\nverbs:\n", cmd_vectors_info.summary);
    for (size_t i = 0; i < NVERBS; i++)
        fprintf(fp, "  %-9s %s\n", verbs[i].info->name + strlen("vectors "), verbs[i].info->summary);
    fprintf(fp, "\n'vecsift vectors <verb> --help' tells more.\n"
                "exit status: 0 success, 1 input/output or internal failure, 2 usage error or bad input\n");
}

int cmd_vectors(int argc, char **argv)
{
    if (argc < 2) {
        list_verbs(stderr);
        return ERR_INPUT;
    }
    const char *verb = argv[1];
    if (strcmp(verb, "--help") == 0 || strcmp(verb, "-h") == 0) {
        list_verbs(stdout);
        return ERR_OK;
    }
    const char *best = NULL;
    size_t bestd = (size_t)-1;
    for (size_t i = 0; i < NVERBS; i++) {
        const char *name = verbs[i].info->name + strlen("vectors ");
        if (strcmp(name, verb) == 0)
            return verbs[i].run(argc - 1, argv + 1);
        size_t d = cli_distance(verb, name);
        if (d < bestd) {
            bestd = d;
            best = name;
        }
    }
    if (bestd <= 2)
        return cli_usage(&cmd_vectors_info, "'%s' is not a verb of 'vectors' (did you mean '%s'?)", verb, best);
    return cli_usage(&cmd_vectors_info, "'%s' is not a verb of 'vectors'", verb);
}

int vectors_default_threads(void)
{
    return cli_default_threads();
}

int vectors_find_words(const vecset *v, char **words, size_t n, int keep_accents, size_t *rows, struct err *e)
{
    struct text_options to = TEXT_OPTIONS_INIT;
    to.keep_accents = keep_accents;
    char missing[512] = "";
    size_t nmiss = 0, used = 0;
    for (size_t i = 0; i < n; i++) {
        char *tok = text_normalize_token(words[i], strlen(words[i]), &to);
        long r = tok ? vecset_find(v, tok) : -1;
        free(tok);
        if (r >= 0) {
            rows[i] = (size_t)r;
            continue;
        }
        nmiss++;
        int k = snprintf(missing + used, sizeof missing - used, "%s'%s'", used ? ", " : "", words[i]);
        if (k > 0 && (size_t)k < sizeof missing - used)
            used += (size_t)k;
    }
    if (nmiss)
        return err_set(e, vecset_path(v), 0, "%s %s: %s", nmiss == 1 ? "word" : "words",
                       nmiss == 1 ? "has no vector" : "have no vector", missing);
    return 0;
}

void vectors_print_hits(const vecset *v, const struct vecset_hit *hits, size_t n)
{
    size_t w = 4;
    for (size_t i = 0; i < n; i++) {
        size_t l = strlen(vecset_word(v, hits[i].row));
        w = l > w ? l : w;
    }
    w = w > 40 ? 40 : w;
    printf("%4s  %-*s  %9s\n", "rank", (int)w, "word", "cosine");
    for (size_t i = 0; i < n; i++)
        printf("%4zu  %-*s  %9.6f\n", i + 1, (int)w, vecset_word(v, hits[i].row), hits[i].cos);
}
