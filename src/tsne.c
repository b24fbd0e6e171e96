/* tsne.c -- 2-D maps by t-SNE, exact for small inputs, Barnes-Hut above.
 *
 * Method: van der Maaten and Hinton (2008), "Visualizing Data using t-SNE",
 * JMLR 9: Gaussian input affinities calibrated to a perplexity, symmetrised
 * joint P, Student-t (one degree of freedom) output kernel, gradient descent
 * with momentum, early exaggeration and per-coordinate gains.
 * Large inputs: van der Maaten (2014), "Accelerating t-SNE using Tree-Based
 * Algorithms", JMLR 15: P kept sparse over the 3*perplexity nearest
 * neighbours, repulsion summed over a quadtree with the theta criterion.
 *
 * N = points, D = input dimensions; Y is (N, 2) row-major.  Everything runs
 * on one thread in a fixed order, so a run repeats bit for bit.  This file
 * does not read or write files and does not draw (see svgplot.c).
 */
#include "vecsift/tsne.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/rng.h"
#include "vecsift/xalloc.h"

/* Optimiser schedule of the paper's reference practice (section 3.4 of the
 * 2008 paper, with the values its reference code and scikit-learn use):
 * exaggeration 12 and momentum 0.5 for the first 250 steps, then 1 and 0.8. */
enum { EXAG_ITERS = 250 };
static const double EXAGGERATION = 12.0;
static const double MOMENTUM_EARLY = 0.5, MOMENTUM_LATE = 0.8;
/* Gains: delta-bar-delta (Jacobs 1988, "Increased rates of convergence
 * through learning rate adaptation", Neural Networks 1) as the t-SNE reference
 * code applies it: +0.2 when the step changes direction, *0.8 otherwise. */
static const double GAIN_UP = 0.2, GAIN_DOWN = 0.8, GAIN_MIN = 0.01;
/* Initial map scale: sd 1e-4 (2008 paper, section 3.4, and scikit-learn). */
static const double INIT_SD = 1e-4;

/* ---- checks ---- */

static int check_input(const double *X, size_t n, size_t d, double perplexity,
                       double *perp_out, struct err *e)
{
    if (n < 4)
        return err_set(e, NULL, 0, "t-SNE needs at least 4 points, got %zu", n);
    if (d == 0)
        return err_set(e, NULL, 0, "t-SNE input has no dimensions");
    size_t nd = xmul(n, d);
    for (size_t k = 0; k < nd; k++)
        if (!isfinite(X[k]))
            return err_set(e, NULL, 0, "t-SNE input point %zu, dimension %zu is not a finite number",
                           k / d + 1, k % d + 1);
    if (!isfinite(perplexity) || perplexity < 1.0)
        return err_set(e, NULL, 0, "perplexity %g is out of range (must be at least 1)", perplexity);
    /* Each row needs about 3*perplexity neighbours (2014 paper, section 4.1),
     * so a perplexity above (n-1)/3 cannot be honoured; lower it. */
    double cap = (double)(n - 1) / 3.0;
    *perp_out = perplexity > cap ? cap : perplexity;
    return 0;
}

static double sqdist(const double *a, const double *b, size_t d)
{
    double s = 0;
    for (size_t k = 0; k < d; k++) {
        double t = a[k] - b[k];
        s += t * t;
    }
    return s;
}

/* ---- input affinities ---- */

/* Given squared distances dist[0..m) from one point to its candidates, write
 * p[0..m) = exp(-beta * dist) / sum with beta found by bisection so that the
 * entropy (natural log) is log(perp).  Distances are shifted by their minimum
 * first; that changes no normalised value and keeps exp() from underflowing
 * to an all-zero row. */
static void calibrate_row(const double *dist, size_t m, double perp, double *p)
{
    const double target = log(perp);
    double dmin = dist[0];
    double mean = 0;
    for (size_t j = 0; j < m; j++)
        if (dist[j] < dmin)
            dmin = dist[j];
    for (size_t j = 0; j < m; j++)
        mean += dist[j] - dmin;
    mean /= (double)m;
    double beta = mean > 0 ? 1.0 / mean : 1.0;
    double lo = 0, hi = INFINITY, sum = 1;
    for (int it = 0; it < 200; it++) {
        double sdp = 0;
        sum = 0;
        for (size_t j = 0; j < m; j++) {
            double s = dist[j] - dmin;
            p[j] = exp(-beta * s);
            sum += p[j];
            sdp += s * p[j];
        }
        double h = log(sum) + beta * sdp / sum; /* sum >= 1: the nearest gives exp(0) */
        if (fabs(h - target) < 1e-10)
            break;
        if (h > target) { /* too flat: narrow the kernel */
            lo = beta;
            beta = isinf(hi) ? beta * 2 : (beta + hi) / 2;
        } else {
            hi = beta;
            beta = (beta + lo) / 2;
        }
    }
    for (size_t j = 0; j < m; j++)
        p[j] /= sum;
}

/* Conditional p(j|i) over all points: P is (N, N). */
static void dense_conditional(const double *X, size_t n, size_t d, double perp, double *P)
{
    double *dist = xmalloc(xmul(n, sizeof *dist));
    double *row = xmalloc(xmul(n, sizeof *row));
    for (size_t i = 0; i < n; i++) {
        size_t m = 0;
        for (size_t j = 0; j < n; j++)
            if (j != i)
                dist[m++] = sqdist(X + i * d, X + j * d, d);
        calibrate_row(dist, m, perp, row);
        m = 0;
        for (size_t j = 0; j < n; j++)
            P[i * n + j] = j == i ? 0.0 : row[m++];
    }
    free(dist);
    free(row);
}

/* Sparse joint P in compressed rows: row i holds cols[rp[i]..rp[i+1]). */
struct sparse {
    size_t *rp;     /* (N+1) */
    size_t *col;    /* (nnz) */
    double *val;    /* (nnz) */
};

struct cand {
    double dist;
    size_t j;
};

/* "a is farther than b", ties broken by index so the selection is fixed. */
static int farther(const struct cand *a, const struct cand *b)
{
    return a->dist > b->dist || (a->dist == b->dist && a->j > b->j);
}

static void heap_sift_down(struct cand *h, size_t k, size_t i)
{
    for (;;) {
        size_t l = 2 * i + 1, r = l + 1, top = i;
        if (l < k && farther(&h[l], &h[top]))
            top = l;
        if (r < k && farther(&h[r], &h[top]))
            top = r;
        if (top == i)
            return;
        struct cand t = h[i];
        h[i] = h[top];
        h[top] = t;
        i = top;
    }
}

static int by_col(const void *a, const void *b)
{
    size_t x = *(const size_t *)a, y = *(const size_t *)b;
    return (x > y) - (x < y);
}

/* Joint P over the K nearest neighbours of each point (K = 3*perplexity,
 * 2014 paper section 4.1), symmetrised as (p(j|i) + p(i|j)) / 2N.  Neighbours
 * are found by brute force: O(N^2 D) once, small next to the optimisation.
 * NEEDSWORK: a vantage-point tree (as the 2014 paper uses) would make this
 * O(N log N) for inputs of tens of thousands. */
static void sparse_joint(const double *X, size_t n, size_t d, double perp, struct sparse *S)
{
    size_t K = (size_t)(3.0 * perp);
    if (K > n - 1)
        K = n - 1;
    if (K < 1)
        K = 1;
    size_t *nbr = xmalloc(xmul(xmul(n, K), sizeof *nbr));   /* (N, K) */
    double *cp = xmalloc(xmul(xmul(n, K), sizeof *cp));     /* (N, K) p(j|i) */
    struct cand *heap = xmalloc(xmul(K, sizeof *heap));
    double *dist = xmalloc(xmul(K, sizeof *dist));
    for (size_t i = 0; i < n; i++) {
        size_t k = 0;
        for (size_t j = 0; j < n; j++) {
            if (j == i)
                continue;
            struct cand c = { sqdist(X + i * d, X + j * d, d), j };
            if (k < K) {
                heap[k++] = c;
                if (k == K)
                    for (size_t s = K / 2 + 1; s-- > 0;)
                        heap_sift_down(heap, K, s);
            } else if (farther(&heap[0], &c)) {
                heap[0] = c;
                heap_sift_down(heap, K, 0);
            }
        }
        for (size_t s = 0; s < K; s++) {
            dist[s] = heap[s].dist;
            nbr[i * K + s] = heap[s].j;
        }
        calibrate_row(dist, K, perp, cp + i * K);
    }
    free(heap);
    free(dist);

    /* Symmetrise: every (i, j, v) is also entered as (j, i, v); then each
     * row is sorted by column and duplicates summed.  Entries are packed as
     * (column, index into cp) pairs so one sort orders both. */
    size_t *cnt = xcalloc(n + 1, sizeof *cnt);
    for (size_t i = 0; i < n; i++)
        for (size_t s = 0; s < K; s++) {
            cnt[i + 1]++;
            cnt[nbr[i * K + s] + 1]++;
        }
    for (size_t i = 0; i < n; i++)
        cnt[i + 1] += cnt[i];
    size_t total = cnt[n];
    size_t *ent = xmalloc(xmul(xmul(total, 2), sizeof *ent)); /* (total, 2): col, source */
    size_t *fill = xmalloc(xmul(n, sizeof *fill));
    memcpy(fill, cnt, n * sizeof *fill);
    for (size_t i = 0; i < n; i++)
        for (size_t s = 0; s < K; s++) {
            size_t j = nbr[i * K + s], src = i * K + s;
            size_t a = fill[i]++, b = fill[j]++;
            ent[2 * a] = j;
            ent[2 * a + 1] = src;
            ent[2 * b] = i;
            ent[2 * b + 1] = src;
        }
    S->rp = xmalloc(xmul(n + 1, sizeof *S->rp));
    S->col = xmalloc(xmul(total, sizeof *S->col));
    S->val = xmalloc(xmul(total, sizeof *S->val));
    size_t out = 0;
    for (size_t i = 0; i < n; i++) {
        S->rp[i] = out;
        size_t *row = ent + 2 * cnt[i];
        size_t m = cnt[i + 1] - cnt[i];
        /* Sort by (column, source): the source makes the order total, so the
         * sums below add in the same order on every run. */
        qsort(row, m, 2 * sizeof *row, by_col);
        for (size_t s = 0; s < m;) {
            size_t c = row[2 * s];
            double v = 0;
            while (s < m && row[2 * s] == c) {
                v += cp[row[2 * s + 1]];
                s++;
            }
            S->col[out] = c;
            S->val[out] = v / (2.0 * (double)n);
            out++;
        }
    }
    S->rp[n] = out;
    free(ent);
    free(fill);
    free(cnt);
    free(nbr);
    free(cp);
}

static void sparse_release(struct sparse *S)
{
    free(S->rp);
    free(S->col);
    free(S->val);
}

/* ---- quadtree (Barnes-Hut repulsion) ---- */

struct qnode {
    double cx, cy, hw;  /* cell centre and half-width */
    double mx, my;      /* sum of member positions; centre of mass after qtree_build */
    size_t count;       /* points below this node */
    size_t child;       /* index of the first of 4 children; 0 = leaf */
    size_t first;       /* leaf: first point in the chain 'next', SIZE_MAX when empty */
};

struct qtree {
    struct qnode *node;
    size_t len, cap;
    size_t *next;       /* (N) chain of points sharing a leaf, SIZE_MAX ends */
};

/* Points closer than this depth would need cells below about 2^-48 of the
 * map's width; past it they share a leaf and are summed one by one. */
enum { QT_MAX_DEPTH = 48 };

static size_t qt_add(struct qtree *t, double cx, double cy, double hw)
{
    t->node = xgrow(t->node, &t->cap, t->len + 1, sizeof *t->node);
    struct qnode *q = &t->node[t->len];
    q->cx = cx;
    q->cy = cy;
    q->hw = hw;
    q->mx = q->my = 0;
    q->count = 0;
    q->child = 0;
    q->first = SIZE_MAX;
    return t->len++;
}

static size_t quadrant(const struct qnode *q, double x, double y)
{
    return (size_t)(x >= q->cx) + 2 * (size_t)(y >= q->cy);
}

static void qt_split(struct qtree *t, size_t at)
{
    double cx = t->node[at].cx, cy = t->node[at].cy, h = t->node[at].hw / 2;
    size_t c = qt_add(t, cx - h, cy - h, h);
    qt_add(t, cx + h, cy - h, h);
    qt_add(t, cx - h, cy + h, h);
    qt_add(t, cx + h, cy + h, h);
    t->node[at].child = c;
}

static void qt_insert(struct qtree *t, const double *Y, size_t i)
{
    double x = Y[2 * i], y = Y[2 * i + 1];
    size_t at = 0;
    for (int depth = 0;; depth++) {
        struct qnode *q = &t->node[at];
        q->count++;
        q->mx += x;
        q->my += y;
        if (q->child) {
            at = q->child + quadrant(q, x, y);
            continue;
        }
        if (q->first == SIZE_MAX) {
            q->first = i;
            t->next[i] = SIZE_MAX;
            return;
        }
        size_t f = q->first;
        if (depth >= QT_MAX_DEPTH || (Y[2 * f] == x && Y[2 * f + 1] == y)) {
            t->next[i] = f;
            q->first = i;
            return;
        }
        /* A leaf with distinct points: split it and push its chain down.
         * A chain longer than one here holds only coincident points, so it
         * moves as a whole. */
        size_t cnt = q->count - 1;
        double mx = q->mx - x, my = q->my - y;
        qt_split(t, at);
        q = &t->node[at]; /* qt_split may have moved the array */
        size_t down = q->child + quadrant(q, Y[2 * f], Y[2 * f + 1]);
        q->first = SIZE_MAX;
        t->node[down].first = f;
        t->node[down].count = cnt;
        t->node[down].mx = mx;
        t->node[down].my = my;
        at = q->child + quadrant(q, x, y); /* one level down for i */
    }
}

static void qtree_build(struct qtree *t, const double *Y, size_t n)
{
    double x0 = Y[0], x1 = Y[0], y0 = Y[1], y1 = Y[1];
    for (size_t i = 1; i < n; i++) {
        x0 = fmin(x0, Y[2 * i]);
        x1 = fmax(x1, Y[2 * i]);
        y0 = fmin(y0, Y[2 * i + 1]);
        y1 = fmax(y1, Y[2 * i + 1]);
    }
    double hw = fmax(x1 - x0, y1 - y0) / 2;
    hw = hw * (1 + 1e-9) + 1e-12;
    t->len = 0;
    qt_add(t, (x0 + x1) / 2, (y0 + y1) / 2, hw);
    for (size_t i = 0; i < n; i++)
        qt_insert(t, Y, i);
    for (size_t k = 0; k < t->len; k++)
        if (t->node[k].count) {
            t->node[k].mx /= (double)t->node[k].count;
            t->node[k].my /= (double)t->node[k].count;
        }
}

/* Add to (*z, *fx, *fy) the repulsion on point i from all other points:
 * z += sum w, f += sum w^2 (y_i - y_j), w = 1 / (1 + |y_i - y_j|^2).  A cell
 * is summarised by its centre of mass when width / distance < theta (2014
 * paper, section 4.2).  Depth-first with an explicit stack, children in a
 * fixed order, so the sums add up in the same order on every run. */
static void qt_repulse(const struct qtree *t, const double *Y, size_t i, double theta,
                       double *z, double *fx, double *fy)
{
    size_t stack[4 * (QT_MAX_DEPTH + 2)];
    size_t top = 0;
    const double xi = Y[2 * i], yi = Y[2 * i + 1], theta2 = theta * theta;
    double zs = 0, fxs = 0, fys = 0;
    stack[top++] = 0;
    while (top) {
        const struct qnode *q = &t->node[stack[--top]];
        if (!q->child) {
            for (size_t j = q->first; j != SIZE_MAX; j = t->next[j]) {
                if (j == i)
                    continue;
                double dx = xi - Y[2 * j], dy = yi - Y[2 * j + 1];
                double w = 1.0 / (1.0 + dx * dx + dy * dy);
                zs += w;
                fxs += w * w * dx;
                fys += w * w * dy;
            }
            continue;
        }
        double dx = xi - q->mx, dy = yi - q->my, d2 = dx * dx + dy * dy;
        double width = 2 * q->hw;
        if (width * width < theta2 * d2) {
            double w = 1.0 / (1.0 + d2), c = (double)q->count;
            zs += c * w;
            fxs += c * w * w * dx;
            fys += c * w * w * dy;
            continue;
        }
        for (size_t k = 4; k-- > 0;) /* pushed in reverse: visited 0, 1, 2, 3 */
            if (t->node[q->child + k].count)
                stack[top++] = q->child + k;
    }
    *z += zs;
    *fx += fxs;
    *fy += fys;
}

/* ---- gradients ---- */

/* dC/dY for the joint P (N, N) and exaggeration 'ex' (2008 paper, eq. 5):
 * G_i = 4 sum_j (ex p_ij - q_ij) w_ij (y_i - y_j), q_ij = w_ij / Z.  Each
 * pair is visited once per pass (the force on j is minus the force on i);
 * W is (N, N) scratch of which the upper triangle is used. */
static void grad_exact(const double *P, const double *Y, size_t n, double ex,
                       double *W, double *G)
{
    double z = 0;
    for (size_t i = 0; i < n; i++)
        for (size_t j = i + 1; j < n; j++) {
            double dx = Y[2 * i] - Y[2 * j], dy = Y[2 * i + 1] - Y[2 * j + 1];
            double w = 1.0 / (1.0 + dx * dx + dy * dy);
            W[i * n + j] = w;
            z += w;
        }
    z *= 2; /* Z sums over ordered pairs */
    memset(G, 0, 2 * n * sizeof *G);
    for (size_t i = 0; i < n; i++) {
        double gx = 0, gy = 0;
        for (size_t j = i + 1; j < n; j++) {
            double w = W[i * n + j];
            double m = (ex * P[i * n + j] - w / z) * w;
            double fx = m * (Y[2 * i] - Y[2 * j]), fy = m * (Y[2 * i + 1] - Y[2 * j + 1]);
            gx += fx;
            gy += fy;
            G[2 * j] -= fx;
            G[2 * j + 1] -= fy;
        }
        G[2 * i] += gx;
        G[2 * i + 1] += gy;
    }
    for (size_t k = 0; k < 2 * n; k++)
        G[k] *= 4;
}

/* The same gradient split as in the 2014 paper, eq. 8: attraction over the
 * sparse P, repulsion over the quadtree, normalised by the estimated Z. */
static void grad_bh(const struct sparse *S, const double *Y, size_t n, double ex,
                    double theta, struct qtree *t, double *G)
{
    qtree_build(t, Y, n);
    double z = 0;
    for (size_t i = 0; i < n; i++) {
        double zi = 0, rx = 0, ry = 0;
        qt_repulse(t, Y, i, theta, &zi, &rx, &ry);
        z += zi;
        G[2 * i] = rx; /* repulsion, divided by z below */
        G[2 * i + 1] = ry;
    }
    for (size_t i = 0; i < n; i++) {
        double ax = 0, ay = 0;
        for (size_t s = S->rp[i]; s < S->rp[i + 1]; s++) {
            size_t j = S->col[s];
            double dx = Y[2 * i] - Y[2 * j], dy = Y[2 * i + 1] - Y[2 * j + 1];
            double m = ex * S->val[s] / (1.0 + dx * dx + dy * dy);
            ax += m * dx;
            ay += m * dy;
        }
        G[2 * i] = 4 * (ax - G[2 * i] / z);
        G[2 * i + 1] = 4 * (ay - G[2 * i + 1] / z);
    }
}

/* ---- initialisation ---- */

/* Y = the first two principal components of X, by subspace iteration on
 * Xc^T Xc (Xc = centred X) from a seeded start, with each component's sign
 * fixed so that its largest loading is positive.  Falls back to the random
 * start when X has no spread (all points equal). */
static void init_pca(const double *X, size_t n, size_t d, struct rng *r, double *Y)
{
    double *mean = xcalloc(d, sizeof *mean);
    for (size_t i = 0; i < n; i++)
        for (size_t k = 0; k < d; k++)
            mean[k] += X[i * d + k];
    for (size_t k = 0; k < d; k++)
        mean[k] /= (double)n;
    size_t m = d < 2 ? d : 2;
    double *V = xmalloc(xmul(xmul(d, 2), sizeof *V));   /* (2, D) */
    double *Vn = xmalloc(xmul(xmul(d, 2), sizeof *Vn)); /* (2, D) */
    for (size_t k = 0; k < 2 * d; k++)
        V[k] = rng_normal(r);
    for (int it = 0; it < 500; it++) {
        memset(Vn, 0, 2 * d * sizeof *Vn);
        for (size_t i = 0; i < n; i++) {
            const double *x = X + i * d;
            for (size_t c = 0; c < m; c++) {
                double s = 0;
                for (size_t k = 0; k < d; k++)
                    s += (x[k] - mean[k]) * V[c * d + k];
                for (size_t k = 0; k < d; k++)
                    Vn[c * d + k] += s * (x[k] - mean[k]);
            }
        }
        /* Gram-Schmidt */
        double change = 0;
        for (size_t c = 0; c < m; c++) {
            double *v = Vn + c * d;
            for (size_t b = 0; b < c; b++) {
                double dot = 0;
                for (size_t k = 0; k < d; k++)
                    dot += v[k] * Vn[b * d + k];
                for (size_t k = 0; k < d; k++)
                    v[k] -= dot * Vn[b * d + k];
            }
            double nrm = 0;
            for (size_t k = 0; k < d; k++)
                nrm += v[k] * v[k];
            nrm = sqrt(nrm);
            for (size_t k = 0; k < d; k++) {
                v[k] = nrm > 0 ? v[k] / nrm : 0;
                change = fmax(change, fabs(v[k] - V[c * d + k]));
            }
        }
        memcpy(V, Vn, 2 * d * sizeof *V);
        if (change < 1e-10)
            break;
    }
    for (size_t c = 0; c < m; c++) {
        size_t big = 0;
        for (size_t k = 1; k < d; k++)
            if (fabs(V[c * d + k]) > fabs(V[c * d + big]))
                big = k;
        if (V[c * d + big] < 0)
            for (size_t k = 0; k < d; k++)
                V[c * d + k] = -V[c * d + k];
    }
    for (size_t i = 0; i < n; i++)
        for (size_t c = 0; c < 2; c++) {
            double s = 0;
            if (c < m)
                for (size_t k = 0; k < d; k++)
                    s += (X[i * d + k] - mean[k]) * V[c * d + k];
            else
                s = rng_normal(r); /* one-dimensional input: no second component */
            Y[2 * i + c] = s;
        }
    /* Scale so the first column has sd 1e-4, as scikit-learn does. */
    double mu = 0, var = 0;
    for (size_t i = 0; i < n; i++)
        mu += Y[2 * i];
    mu /= (double)n;
    for (size_t i = 0; i < n; i++)
        var += (Y[2 * i] - mu) * (Y[2 * i] - mu);
    double sd = sqrt(var / (double)n);
    if (sd > 0 && isfinite(sd)) {
        for (size_t k = 0; k < 2 * n; k++)
            Y[k] *= INIT_SD / sd;
    } else {
        for (size_t k = 0; k < 2 * n; k++)
            Y[k] = INIT_SD * rng_normal(r);
    }
    free(mean);
    free(V);
    free(Vn);
}

/* ---- API ---- */

/* X itself, or a new scaled copy (*copy set, caller frees) when its values
 * are so large that squared distances overflow or so small that they
 * underflow.  P is unchanged by scaling X (the bandwidth search absorbs the
 * scale) and the PCA start is rescaled anyway, so the map is the same. */
static const double *tame_scale(const double *X, size_t n, size_t d, double **copy)
{
    size_t nd = n * d; /* checked by check_input */
    double big = 0;
    *copy = NULL;
    for (size_t k = 0; k < nd; k++)
        big = fmax(big, fabs(X[k]));
    if (big == 0 || (big < 1e100 && big > 1e-100))
        return X;
    *copy = xmalloc(xmul(nd, sizeof **copy));
    for (size_t k = 0; k < nd; k++)
        (*copy)[k] = X[k] / big;
    return *copy;
}

int tsne_affinities(const double *X, size_t n, size_t d, double perplexity,
                    double *P, struct err *e)
{
    double perp;
    if (check_input(X, n, d, perplexity, &perp, e) < 0)
        return -1;
    double *copy;
    dense_conditional(tame_scale(X, n, d, &copy), n, d, perp, P);
    free(copy);
    return 0;
}

int tsne_run(const double *X, size_t n, size_t d, const struct tsne_params *p,
             double *Y, struct err *e)
{
    static const struct tsne_params defaults = TSNE_PARAMS_INIT;
    if (!p)
        p = &defaults;
    double perp;
    if (check_input(X, n, d, p->perplexity, &perp, e) < 0)
        return -1;
    if (p->iters < 1)
        return err_set(e, NULL, 0, "t-SNE iterations %d is out of range (must be at least 1)", p->iters);
    if (!(p->theta >= 0 && p->theta <= 1))
        return err_set(e, NULL, 0, "t-SNE theta %g is out of range (must be in [0, 1])", p->theta);
    if (p->exact < -1 || p->exact > 1)
        return err_set(e, NULL, 0, "t-SNE 'exact' must be -1, 0 or 1, got %d", p->exact);
    if (p->init != TSNE_INIT_PCA && p->init != TSNE_INIT_RANDOM)
        return err_set(e, NULL, 0, "unknown t-SNE initialisation %d", p->init);
    int exact = p->exact == -1 ? n <= TSNE_EXACT_MAX : p->exact;
    double *copy;
    X = tame_scale(X, n, d, &copy);

    struct rng r;
    rng_seed(&r, p->seed);
    if (p->init == TSNE_INIT_PCA) {
        init_pca(X, n, d, &r, Y);
    } else {
        for (size_t k = 0; k < 2 * n; k++)
            Y[k] = INIT_SD * rng_normal(&r);
    }

    double *P = NULL, *W = NULL;
    struct sparse S = { NULL, NULL, NULL };
    struct qtree t = { NULL, 0, 0, NULL };
    if (exact) {
        P = xmalloc(xmul(xmul(n, n), sizeof *P));
        W = xmalloc(xmul(xmul(n, n), sizeof *W));
        dense_conditional(X, n, d, perp, P);
        for (size_t i = 0; i < n; i++)
            for (size_t j = i; j < n; j++) {
                double v = (P[i * n + j] + P[j * n + i]) / (2.0 * (double)n);
                P[i * n + j] = P[j * n + i] = v;
            }
    } else {
        sparse_joint(X, n, d, perp, &S);
        t.next = xmalloc(xmul(n, sizeof *t.next));
    }

    /* Learning rate max(N / 12 / 4, 50): the "auto" rule of scikit-learn
     * after Belkina et al. (2019), "Automated optimized parameters for
     * t-distributed stochastic neighbor embedding...", Nature Communications
     * 10 (rule from memory of scikit-learn's documentation). */
    double eta = fmax((double)n / EXAGGERATION / 4.0, 50.0);
    double *G = xmalloc(xmul(2 * n, sizeof *G));
    double *U = xcalloc(2 * n, sizeof *U);      /* previous step */
    double *gain = xmalloc(xmul(2 * n, sizeof *gain));
    for (size_t k = 0; k < 2 * n; k++)
        gain[k] = 1.0;
    for (int it = 0; it < p->iters; it++) {
        double ex = it < EXAG_ITERS ? EXAGGERATION : 1.0;
        double mom = it < EXAG_ITERS ? MOMENTUM_EARLY : MOMENTUM_LATE;
        if (exact)
            grad_exact(P, Y, n, ex, W, G);
        else
            grad_bh(&S, Y, n, ex, p->theta, &t, G);
        for (size_t k = 0; k < 2 * n; k++) {
            if (U[k] * G[k] < 0)
                gain[k] += GAIN_UP;
            else
                gain[k] *= GAIN_DOWN;
            if (gain[k] < GAIN_MIN)
                gain[k] = GAIN_MIN;
            U[k] = mom * U[k] - eta * gain[k] * G[k];
            Y[k] += U[k];
        }
        /* Recentre: the cost ignores translation; drifting is pointless. */
        double mx = 0, my = 0;
        for (size_t i = 0; i < n; i++) {
            mx += Y[2 * i];
            my += Y[2 * i + 1];
        }
        mx /= (double)n;
        my /= (double)n;
        for (size_t i = 0; i < n; i++) {
            Y[2 * i] -= mx;
            Y[2 * i + 1] -= my;
        }
    }
    free(G);
    free(U);
    free(gain);
    free(P);
    free(W);
    sparse_release(&S);
    free(t.node);
    free(t.next);
    free(copy);
    for (size_t k = 0; k < 2 * n; k++)
        if (!isfinite(Y[k]))
            return err_io(e, NULL, 0, "t-SNE optimisation diverged (coordinate %zu is not finite)", k / 2 + 1);
    return 0;
}
