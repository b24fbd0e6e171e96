/* tsne.h -- 2-D maps of vectors by t-SNE.
 *
 * t-SNE: van der Maaten and Hinton (2008), "Visualizing Data using t-SNE",
 * JMLR 9.  For larger inputs the Barnes-Hut approximation of van der Maaten
 * (2014), "Accelerating t-SNE using Tree-Based Algorithms", JMLR 15.
 *
 * A map is a picture, not a measurement: nearby points were near in the input,
 * but distances between far-apart groups and the sizes of groups mean little.
 * Runs are single-threaded and repeat exactly: same input, parameters and
 * seed give bit-identical coordinates.  This module does not draw; see
 * svgplot.h.
 */
#ifndef VECSIFT_TSNE_H
#define VECSIFT_TSNE_H

#include <stddef.h>
#include <stdint.h>

struct err;

enum tsne_init {
    TSNE_INIT_PCA = 0,  /* first two principal components, scaled to sd 1e-4 */
    TSNE_INIT_RANDOM    /* normal deviates with sd 1e-4, drawn from 'seed' */
};

struct tsne_params {
    double perplexity;  /* effective number of neighbours, >= 1; larger than
                           (n-1)/3 is lowered to (n-1)/3 */
    int iters;          /* gradient steps, >= 1 (the first 250 exaggerate P) */
    double theta;       /* Barnes-Hut accuracy, >= 0 (0 = exact repulsion) */
    uint64_t seed;      /* random initialisation and PCA start vectors */
    int exact;          /* 1 exact O(n^2), 0 Barnes-Hut, -1 exact when n <= TSNE_EXACT_MAX */
    int init;           /* enum tsne_init */
};
#define TSNE_PARAMS_INIT { 30.0, 1000, 0.5, 1, -1, TSNE_INIT_PCA }

/* With exact = -1, inputs up to this many points use the exact gradient.
 * Measured on the 1797 digits of scikit-learn's load_digits: exact 13.8 s,
 * Barnes-Hut 3.7 s of CPU, same trustworthiness (0.993); exact cost grows as
 * N^2, so above about 1000 points Barnes-Hut is the better trade. */
#define TSNE_EXACT_MAX 1000

/* Map the n rows of X ((n, d) row-major) to Y ((n, 2) row-major, allocated
 * by the caller).  'p' may be NULL for the defaults.  Returns 0, or -1 with
 * 'e' set (ERR_INPUT) when n < 4, d == 0, X holds a NaN or infinity, or a
 * parameter is out of range; Y is then unspecified. */
int tsne_run(const double *X, size_t n, size_t d, const struct tsne_params *p,
             double *Y, struct err *e);

/* The conditional input affinities p(j|i) of the paper, section 2: row i of
 * P ((n, n), allocated by the caller) is a Gaussian kernel over squared
 * distances from x_i whose bandwidth is found by bisection so that the row's
 * entropy is log(perplexity) (natural log); P[i*n+i] = 0.  Exposed so the
 * calibration can be tested.  Perplexity is clamped as in tsne_run.  Returns
 * 0, or -1 with 'e' set for the same bad inputs as tsne_run. */
int tsne_affinities(const double *X, size_t n, size_t d, double perplexity,
                    double *P, struct err *e);

#endif
