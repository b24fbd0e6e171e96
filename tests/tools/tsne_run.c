/* tsne_run.c -- test-only driver for tsne.h: numbers in, 2-D coordinates out.
 *
 * usage: tsne_run [options] IN.csv OUT.csv
 *
 * IN.csv holds one point per line, numbers separated by commas, no header.
 * OUT.csv gets one "x,y" line per point (%.17g, so runs can be compared
 * byte for byte).  Options: --perplexity P, --iters N, --theta T, --seed S,
 * --method auto|exact|bh, --init pca|random.
 * --svg FILE also draws the map with svgplot.h; --labels FILE gives each
 * point's label index and tooltip, one "INDEX<TAB>TEXT" line per point
 * (labels are named "group INDEX").  The external checks in
 * tests/ext/ drive it; it is not installed and is not the user's interface.
 */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/ofile.h"
#include "vecsift/svgplot.h"
#include "vecsift/tsne.h"
#include "vecsift/xalloc.h"

static int fail(const struct err *e)
{
    fprintf(stderr, "tsne_run: %s\n", e->msg);
    return e->code ? e->code : 1;
}

/* Read the rows of 'path' into a new (n, d) slab. */
static double *read_points(const char *path, size_t *n_out, size_t *d_out, struct err *e)
{
    FILE *fp = strcmp(path, "-") == 0 ? stdin : fopen(path, "r");
    if (!fp) {
        err_io(e, path, 0, "cannot open: %s", strerror(errno));
        return NULL;
    }
    double *X = NULL;
    size_t n = 0, d = 0, len = 0, cap = 0;
    char *line = NULL;
    size_t lcap = 0;
    long lineno = 0;
    while (getline(&line, &lcap, fp) >= 0) {
        lineno++;
        char *s = line;
        s[strcspn(s, "\r\n")] = '\0';
        if (*s == '\0')
            continue;
        size_t k = 0;
        for (;;) {
            char *end;
            errno = 0;
            double v = strtod(s, &end);
            if (end == s || errno == ERANGE || !isfinite(v)) {
                err_set(e, path, lineno, "field %zu is not a finite number", k + 1);
                goto fail;
            }
            X = xgrow(X, &cap, len + 1, sizeof *X);
            X[len++] = v;
            k++;
            s = end;
            while (*s == ' ')
                s++;
            if (*s == '\0')
                break;
            if (*s != ',') {
                err_set(e, path, lineno, "unexpected character after field %zu", k);
                goto fail;
            }
            s++;
        }
        if (n == 0)
            d = k;
        else if (k != d) {
            err_set(e, path, lineno, "row has %zu numbers, the first row has %zu", k, d);
            goto fail;
        }
        n++;
    }
    if (ferror(fp)) {
        err_io(e, path, 0, "read error");
        goto fail;
    }
    if (fp != stdin)
        fclose(fp);
    free(line);
    *n_out = n;
    *d_out = d;
    return X;
fail:
    if (fp != stdin)
        fclose(fp);
    free(line);
    free(X);
    return NULL;
}

/* Read n "INDEX<TAB>TEXT" lines: label indexes into label[], the texts into
 * titles[] (new strings), the largest index + 1 into *nlabels. */
static int read_labels(const char *path, size_t n, int *label, char **titles,
                       size_t *nlabels, struct err *e)
{
    FILE *fp = fopen(path, "r");
    if (!fp)
        return err_io(e, path, 0, "cannot open: %s", strerror(errno));
    char *line = NULL;
    size_t lcap = 0, i = 0;
    int rc = 0;
    *nlabels = 0;
    while (i < n && getline(&line, &lcap, fp) >= 0) {
        line[strcspn(line, "\n")] = '\0';
        char *end;
        long k = strtol(line, &end, 10);
        if (end == line || *end != '\t' || k < -1 || k > 1000) {
            rc = err_set(e, path, (long)i + 1, "expected a label index from -1 to 1000, a tab, then text");
            break;
        }
        label[i] = (int)k;
        titles[i] = xstrdup(end + 1);
        if (k >= 0 && (size_t)k + 1 > *nlabels)
            *nlabels = (size_t)k + 1;
        i++;
    }
    if (rc == 0 && i < n)
        rc = err_set(e, path, 0, "has %zu lines, the points file has %zu rows", i, n);
    free(line);
    fclose(fp);
    return rc;
}

static int write_svg(const char *path, const char *labels_path, const double *Y, size_t n,
                     struct err *e)
{
    int *label = NULL;
    char **titles = NULL, **names = NULL;
    size_t nlabels = 0;
    int rc = -1;
    ofile *o = NULL;
    if (labels_path) {
        label = xcalloc(n, sizeof *label);
        titles = xcalloc(n, sizeof *titles);
        if (read_labels(labels_path, n, label, titles, &nlabels, e) < 0)
            goto out;
        names = xcalloc(nlabels + 1, sizeof *names);
        for (size_t k = 0; k < nlabels; k++) {
            char buf[32];
            snprintf(buf, sizeof buf, "group %zu", k);
            names[k] = xstrdup(buf);
        }
    }
    o = ofile_open(path, e);
    if (!o)
        goto out;
    if (svgplot_scatter(ofile_fp(o), Y, n, label, (const char *const *)names, nlabels,
                        (const char *const *)titles, SVGPLOT_MAP_CAPTION, e) < 0) {
        ofile_abort(o);
        goto out;
    }
    rc = ofile_commit(o, e);
out:
    for (size_t i = 0; titles && i < n; i++)
        free(titles[i]);
    for (size_t k = 0; names && k < nlabels; k++)
        free(names[k]);
    free(titles);
    free(names);
    free(label);
    return rc;
}

static int parse_num(const char *opt, const char *s, double *out)
{
    char *end;
    errno = 0;
    *out = strtod(s, &end);
    if (end == s || *end || errno) {
        fprintf(stderr, "tsne_run: --%s: '%s' is not a number\n", opt, s);
        return -1;
    }
    return 0;
}

int main(int argc, char **argv)
{
    static const struct option longopts[] = {
        { "perplexity", required_argument, NULL, 'p' },
        { "iters", required_argument, NULL, 'i' },
        { "theta", required_argument, NULL, 't' },
        { "seed", required_argument, NULL, 's' },
        { "method", required_argument, NULL, 'm' },
        { "init", required_argument, NULL, 'I' },
        { "svg", required_argument, NULL, 'S' },
        { "labels", required_argument, NULL, 'L' },
        { NULL, 0, NULL, 0 }
    };
    struct tsne_params p = TSNE_PARAMS_INIT;
    struct err e = ERR_INIT;
    const char *svg = NULL, *labels = NULL;
    int c;
    double v;
    while ((c = getopt_long(argc, argv, "", longopts, NULL)) != -1) {
        switch (c) {
        case 'p':
            if (parse_num("perplexity", optarg, &p.perplexity) < 0)
                return 2;
            break;
        case 'i':
            if (parse_num("iters", optarg, &v) < 0)
                return 2;
            p.iters = (int)v;
            break;
        case 't':
            if (parse_num("theta", optarg, &p.theta) < 0)
                return 2;
            break;
        case 's':
            if (parse_num("seed", optarg, &v) < 0)
                return 2;
            p.seed = (uint64_t)v;
            break;
        case 'm':
            if (strcmp(optarg, "auto") == 0)
                p.exact = -1;
            else if (strcmp(optarg, "exact") == 0)
                p.exact = 1;
            else if (strcmp(optarg, "bh") == 0)
                p.exact = 0;
            else {
                fprintf(stderr, "tsne_run: --method: '%s' is not auto, exact or bh\n", optarg);
                return 2;
            }
            break;
        case 'I':
            if (strcmp(optarg, "pca") == 0)
                p.init = TSNE_INIT_PCA;
            else if (strcmp(optarg, "random") == 0)
                p.init = TSNE_INIT_RANDOM;
            else {
                fprintf(stderr, "tsne_run: --init: '%s' is not pca or random\n", optarg);
                return 2;
            }
            break;
        case 'S':
            svg = optarg;
            break;
        case 'L':
            labels = optarg;
            break;
        default:
            return 2;
        }
    }
    if (argc - optind != 2) {
        fprintf(stderr, "usage: tsne_run [options] IN.csv OUT.csv\n");
        return 2;
    }
    size_t n = 0, d = 0;
    double *X = read_points(argv[optind], &n, &d, &e);
    if (!X && e.code)
        return fail(&e);
    double *Y = xmalloc(xmul(xmul(n, 2), sizeof *Y));
    int rc = 0;
    ofile *o = NULL;
    if (tsne_run(X, n, d, &p, Y, &e) < 0) {
        rc = fail(&e);
        goto out;
    }
    o = ofile_open(argv[optind + 1], &e);
    if (!o) {
        rc = fail(&e);
        goto out;
    }
    for (size_t i = 0; i < n; i++)
        fprintf(ofile_fp(o), "%.17g,%.17g\n", Y[2 * i], Y[2 * i + 1]);
    if (ofile_commit(o, &e) < 0) {
        rc = fail(&e);
        goto out;
    }
    if (svg && write_svg(svg, labels, Y, n, &e) < 0)
        rc = fail(&e);
out:
    free(X);
    free(Y);
    return rc;
}
