/* fit_linear.c -- test-only driver: fit linear.h on a numeric CSV and print
 * the fit, so tests/ext/linear_vs_sklearn.py can compare it with an outside
 * reference.  Not installed and not part of the command line.
 *
 * usage: fit_linear [--C X] [--balanced] [--sparse] [--tol X] [--max-iter N] DATA.csv
 *
 * DATA.csv: a header row, then rows "label,x1,...,xD" with integer labels
 * 0..K-1.  --sparse stores only the nonzero features (CSR).  Prints to
 * stdout "objective V", "iterations N", "converged 0|1", "seconds S", then
 * K lines "b_k w_k1 ... w_kD" (the model), then one line of K
 * probabilities per row.  The time spent computing the probabilities goes
 * to stderr as "predict_seconds S".
 */
#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "vecsift/err.h"
#include "vecsift/fmat.h"
#include "vecsift/linear.h"
#include "vecsift/xalloc.h"

static void die(const char *path, long line, const char *what)
{
    fprintf(stderr, "fit_linear: %s:%ld: %s\n", path, line, what);
    exit(2);
}

static double num(const char *s, const char *path, long line)
{
    char *end;
    errno = 0;
    double v = strtod(s, &end);
    if (end == s || errno || (*end && *end != ',' && *end != '\n' && *end != '\r'))
        die(path, line, "not a number");
    return v;
}

int main(int argc, char **argv)
{
    struct linear_params p = LINEAR_PARAMS_INIT;
    int sparse = 0;
    const char *path = NULL;
    for (int a = 1; a < argc; a++) {
        if (!strcmp(argv[a], "--C") && a + 1 < argc)
            p.C = num(argv[a + 1], "argv", a + 1), a++;
        else if (!strcmp(argv[a], "--tol") && a + 1 < argc)
            p.tol = num(argv[a + 1], "argv", a + 1), a++;
        else if (!strcmp(argv[a], "--max-iter") && a + 1 < argc)
            p.max_iter = (int)num(argv[a + 1], "argv", a + 1), a++;
        else if (!strcmp(argv[a], "--balanced"))
            p.balanced = 1;
        else if (!strcmp(argv[a], "--sparse"))
            sparse = 1;
        else if (!path && argv[a][0] != '-')
            path = argv[a];
        else
            die("argv", a, "usage: fit_linear [--C X] [--balanced] [--sparse] [--tol X] [--max-iter N] DATA.csv");
    }
    if (!path)
        die("argv", 0, "no input file");
    FILE *fp = fopen(path, "r");
    if (!fp)
        die(path, 0, strerror(errno));

    char *line = NULL;
    size_t cap = 0, d = 0, n = 0, ycap = 0, dcap = 0;
    long ln = 0;
    int *y = NULL, kmax = -1;
    double *vals = NULL;       /* all numbers, row-major */
    if (getline(&line, &cap, fp) < 0)
        die(path, 1, "empty file");
    ln = 1;
    for (const char *c = line; *c; c++)
        d += *c == ',';
    while (getline(&line, &cap, fp) >= 0) {
        ln++;
        char *s = line;
        y = xgrow(y, &ycap, n + 1, sizeof *y);
        double lab = num(s, path, ln);
        if (lab < 0 || lab != floor(lab) || lab > 1e6)
            die(path, ln, "label is not a class index");
        y[n] = (int)lab;
        if (y[n] > kmax)
            kmax = y[n];
        vals = xgrow(vals, &dcap, (n + 1) * d, sizeof *vals);
        for (size_t j = 0; j < d; j++) {
            s = strchr(s, ',');
            if (!s)
                die(path, ln, "too few fields");
            vals[n * d + j] = num(++s, path, ln);
        }
        n++;
    }
    free(line);
    fclose(fp);

    struct fmat X = FMAT_INIT;
    if (sparse) {
        uint32_t *cols = xcalloc(d, sizeof *cols);
        double *v = xcalloc(d, sizeof *v);
        fmat_sparse(&X, d);
        for (size_t i = 0; i < n; i++) {
            size_t nz = 0;
            for (size_t j = 0; j < d; j++)
                if (vals[i * d + j] != 0) {
                    cols[nz] = (uint32_t)j;
                    v[nz++] = vals[i * d + j];
                }
            fmat_push_row(&X, cols, v, nz);
        }
        free(cols);
        free(v);
    } else {
        fmat_dense(&X, n, d);
        memcpy(X.x, vals, n * d * sizeof *vals);
    }
    free(vals);

    size_t k = (size_t)(kmax + 1);
    struct linear_model m = LINEAR_MODEL_INIT;
    struct err e = ERR_INIT;
    struct timespec t0, t1;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    if (linear_fit(&m, &X, y, k, &p, &e) < 0)
        die(path, 0, e.msg);
    clock_gettime(CLOCK_MONOTONIC, &t1);
    printf("objective %.17g\niterations %d\nconverged %d\nseconds %.6f\n", m.objective, m.iters,
           m.converged, (double)(t1.tv_sec - t0.tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0.tv_nsec));
    for (size_t c = 0; c < k; c++) {
        printf("%.17g", m.b[c]);
        for (size_t j = 0; j < d; j++)
            printf(" %.17g", m.W[c * d + j]);
        putchar('\n');
    }
    double *pr = xcalloc(xmul(n, k), sizeof *pr);
    clock_gettime(CLOCK_MONOTONIC, &t0);
    for (size_t i = 0; i < n; i++)
        linear_proba(&m, &X, i, pr + i * k);
    clock_gettime(CLOCK_MONOTONIC, &t1);
    fprintf(stderr, "predict_seconds %.6f\n",
            (double)(t1.tv_sec - t0.tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0.tv_nsec));
    for (size_t i = 0; i < n; i++)
        for (size_t c = 0; c < k; c++)
            printf(c + 1 < k ? "%.17g " : "%.17g\n", pr[i * k + c]);
    free(pr);
    free(y);
    linear_release(&m);
    fmat_release(&X);
    return fflush(stdout) || ferror(stdout) ? 1 : 0;
}
