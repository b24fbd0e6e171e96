/* route_text.c -- an example program for the installed vecsift library:
 * open a model made by `vecsift train` and route texts read from standard
 * input, one text a line.  For each text it prints one line, tab-separated:
 *
 *     route   label   confidence   top words ("word (+0.123); ...")
 *
 * (confidence with 4 decimals, as `vecsift predict` writes it).  Build it
 * against the installed library:
 *
 *     cc route_text.c $(pkg-config --cflags --libs vecsift) -o route_text
 *     printf 'my parcel never arrived\n' | ./route_text model.json
 *
 * Usage: route_text MODEL.json [VECTORS.vecs] [WORDS]
 * A classifier misroutes some texts: keep a person on the "review" route.
 * The texts may be personal data; handle them under your local law and
 * policy.  (The tickets of the project's demo are invented.) */
#define _POSIX_C_SOURCE 200809L /* getline */

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <vecsift/vecsift.h>

int main(int argc, char **argv)
{
    if (argc < 2 || argc > 4) {
        fprintf(stderr, "usage: route_text MODEL.json [VECTORS.vecs] [WORDS]\n");
        return 2;
    }
    const char *vectors = argc > 2 && argv[2][0] ? argv[2] : NULL;
    size_t words = argc > 3 ? (size_t)strtoul(argv[3], NULL, 10) : 3;
    vecsift_error err;
    vecsift_model *m = vecsift_open(argv[1], vectors, &err);
    if (!m) {
        fprintf(stderr, "route_text: %s\n", err.message);
        if (err.hint[0])
            fprintf(stderr, "hint: %s\n", err.hint);
        return err.status;
    }
    fprintf(stderr, "route_text: library %s (header %s), %zu labels, cut-off %.3f\n", vecsift_version(),
            VECSIFT_VERSION_STRING, vecsift_labels(m), vecsift_cutoff(m));
    char *line = NULL;
    size_t cap = 0;
    ssize_t len;
    long lineno = 0;
    int status = 0;
    while ((len = getline(&line, &cap, stdin)) >= 0) {
        lineno++;
        while (len > 0 && (line[len - 1] == '\n' || line[len - 1] == '\r'))
            line[--len] = '\0';
        vecsift_result *r = vecsift_route(m, line, words, &err);
        if (!r) {
            fprintf(stderr, "route_text: stdin:%ld: %s\n", lineno, err.message);
            status = err.status;
            break;
        }
        printf("%s\t%s\t%.4f\t", vecsift_result_route(r), vecsift_result_label(r), vecsift_result_confidence(r));
        for (size_t i = 0; i < vecsift_result_words(r); i++) {
            double push;
            const char *w = vecsift_result_word(r, i, &push);
            printf("%s%.80s (%+.3f)", i ? "; " : "", w, push);
        }
        putchar('\n');
        vecsift_result_free(r);
    }
    free(line);
    vecsift_close(m);
    if (fflush(stdout) != 0 || ferror(stdout)) {
        fprintf(stderr, "route_text: could not write the output\n");
        return 1;
    }
    return status;
}
