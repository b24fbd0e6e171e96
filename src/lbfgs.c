/* lbfgs.c -- limited-memory BFGS with a strong-Wolfe line search.
 *
 * References (all from J. Nocedal and S. J. Wright, "Numerical
 * Optimization", 2nd ed., Springer, 2006):
 *   Algorithm 7.4  L-BFGS two-loop recursion (the product H_k grad f_k)
 *   Algorithm 7.5  L-BFGS, with H_k^0 = gamma_k I, gamma_k from eq. (7.20)
 *   Algorithm 3.5  line search for the strong Wolfe conditions (3.7)
 *   Algorithm 3.6  zoom, trial steps by cubic interpolation, eq. (3.59)
 * Constants c1 = 1e-4 and c2 = 0.9 are the values the book recommends for
 * quasi-Newton methods (section 3.1).  The optimiser knows nothing about the
 * function beyond values and gradients; see linear.c for its main user.
 */
#include "vecsift/lbfgs.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/xalloc.h"
#include "vec4.h"

#define C1 1e-4
#define C2 0.9
/* Function evaluations one line search may spend before giving up.
 * Common practice (a few tens; SciPy's L-BFGS-B allows 20 by default,
 * from memory). */
#define LS_MAX_EVALS 40
/* Largest step Algorithm 3.5 may try (alpha_max). */
#define ALPHA_MAX 1e20
/* Relative size of rounding noise in f: see approx_wolfe(). */
#define F_NOISE 1e-12

/* ---- vector kernels ----
 *
 * The two-loop recursion is a dozen dot products and updates over n
 * entries per iteration: for logistic regression over 300 columns and 7
 * classes they took a sixth of `evaluate`, most of it waiting on the one
 * running sum of a plain dot product.  So dot() keeps eight partial sums
 * (two four-lane vectors over entries j mod 8), added up in a fixed order
 * at the end; the updates are lane-wise, the same arithmetic as the plain
 * loops.  Results do not depend on the CPU (vec4.h). */

/* a . b in vec4_dot's fixed order (vec4.h). */
VEC4_CLONES static double dot(size_t n, const double *a, const double *b)
{
    return vec4_dot(n, a, b);
}

/* y[j] = x[j] + a * d[j] (y may be x). */
VEC4_CLONES static void axpy(size_t n, double a, const double *d, const double *x, double *y)
{
    vec4_axpy(n, a, d, x, y);
}

/* d[j] += a * v[j] for j < n, then w . d: one pass doing what axpy then
 * dot do, with the same bits (each d[j] is updated lane-wise as axpy
 * does, and the products are summed in vec4_dot's order), reading d once.
 * The two-loop recursion is a chain of such pairs. */
VEC4_CLONES static double axpy_dot(size_t n, double a, const double *v, double *d, const double *w)
{
    v4d av = VEC4_SPLAT(a), s0 = VEC4_SPLAT(0.0), s1 = s0, dv, vv, wv;
    size_t j = 0;
    for (; j + 8 <= n; j += 8) {
        VEC4_LOAD(dv, d + j);
        VEC4_LOAD(vv, v + j);
        dv += av * vv;
        VEC4_STORE(d + j, dv);
        VEC4_LOAD(wv, w + j);
        s0 += wv * dv;
        VEC4_LOAD(dv, d + j + 4);
        VEC4_LOAD(vv, v + j + 4);
        dv += av * vv;
        VEC4_STORE(d + j + 4, dv);
        VEC4_LOAD(wv, w + j + 4);
        s1 += wv * dv;
    }
    s0 += s1;
    double s = (s0[0] + s0[1]) + (s0[2] + s0[3]);
    for (; j < n; j++) {
        d[j] = d[j] + a * v[j];
        s += w[j] * d[j];
    }
    return s;
}

/* max_j |a_j| (0 for none; NaN entries are passed over, as the plain
 * loop's comparison does).  A maximum does not depend on the order it is
 * taken in, so four running maxima give the plain loop's result. */
VEC4_CLONES static double norm_inf(size_t n, const double *a)
{
    const v4i magnitude = VEC4_SPLAT_BITS(INT64_MAX); /* all bits but the sign */
    v4d m = VEC4_SPLAT(0.0), v;
    size_t j = 0;
    for (; j + 4 <= n; j += 4) {
        VEC4_LOAD(v, a + j);
        v = (v4d)((v4i)v & magnitude);
        v4i more = v > m;
        m = (v4d)(((v4i)v & more) | ((v4i)m & ~more));
    }
    double r = 0;
    for (int l = 0; l < 4; l++)
        if (m[l] > r)
            r = m[l];
    for (; j < n; j++)
        if (fabs(a[j]) > r)
            r = fabs(a[j]);
    return r;
}

/* d = s * a (s = -1: negation, exact), lane-wise. */
VEC4_CLONES static void scaled(size_t n, double s, const double *a, double *d)
{
    v4d sv = VEC4_SPLAT(s), v;
    size_t j = 0;
    for (; j + 4 <= n; j += 4) {
        VEC4_LOAD(v, a + j);
        v *= sv;
        VEC4_STORE(d + j, v);
    }
    for (; j < n; j++)
        d[j] = s * a[j];
}

/* ---- line search (Algorithms 3.5 and 3.6) ---- */

/* phi(a) = f(x + a d) along the search direction, evaluated into xt, gt. */
struct line {
    size_t n;
    const double *x, *d;
    double *xt, *gt;
    lbfgs_eval fn;
    void *ctx;
    int evals;
    int approx;    /* the accepted step met only approx_wolfe() */
};

struct pt {
    double a, f, df;    /* step, phi(a), phi'(a) */
};

static int strong_wolfe(struct pt p0, struct pt t)
{
    return t.f <= p0.f + C1 * t.a * p0.df && fabs(t.df) <= -C2 * p0.df;
}

/* Near a minimum, phi(a) - phi(0) falls below the rounding noise of f and
 * the sufficient decrease test becomes a coin toss, so no step would ever
 * be accepted.  The remedy of W. W. Hager and H. Zhang (2005), "A new
 * conjugate gradient method with guaranteed descent and an efficient line
 * search" (SIAM J. Optim. 16(1)), is to accept a step that meets the
 * curvature condition while f has not risen beyond that noise; their
 * gradient form of sufficient decrease, phi'(a) <= (1 - 2 c1) |phi'(0)|,
 * is implied by |phi'(a)| <= c2 |phi'(0)| for c2 = 0.9.  Only tried after the
 * strong Wolfe test fails; such steps are flagged to the watcher, and the
 * ftol test then usually ends the run. */
static int approx_wolfe(struct pt p0, struct pt t)
{
    return t.f <= p0.f + F_NOISE * fabs(p0.f) && fabs(t.df) <= -C2 * p0.df;
}

static struct pt phi(struct line *l, double a)
{
    axpy(l->n, a, l->d, l->x, l->xt);
    struct pt p = { a, l->fn(l->ctx, l->xt, l->gt), 0 };
    l->evals++;
    p.df = dot(l->n, l->gt, l->d);
    /* A step into an overflow or a domain error counts as "too long":
     * Armijo fails at f = inf, and zoom then shrinks the bracket. */
    if (!isfinite(p.f) || !isfinite(p.df)) {
        p.f = INFINITY;
        p.df = NAN;
    }
    return p;
}

/* A trial step between lo.a and hi.a: the minimiser of the cubic
 * interpolating phi and phi' at both ends (eq. 3.59), else of the quadratic
 * through phi(lo), phi'(lo), phi(hi) (eq. 3.57 generalised to lo != 0),
 * kept at least a tenth of the bracket away from either end so the bracket
 * shrinks geometrically; bisection when neither model is usable. */
static double interpolate(struct pt lo, struct pt hi)
{
    double t = NAN;
    if (isfinite(hi.f) && isfinite(hi.df)) {
        double d1 = lo.df + hi.df - 3 * (lo.f - hi.f) / (lo.a - hi.a);
        double disc = d1 * d1 - lo.df * hi.df;
        if (disc >= 0) {
            double d2 = copysign(sqrt(disc), hi.a - lo.a);
            double den = hi.df - lo.df + 2 * d2;
            if (den != 0)
                t = hi.a - (hi.a - lo.a) * (hi.df + d2 - d1) / den;
        }
    }
    if (!isfinite(t) && isfinite(hi.f)) {
        double w = hi.a - lo.a;
        double curv = hi.f - lo.f - lo.df * w;
        if (curv > 0)
            t = lo.a - lo.df * w * w / (2 * curv);
    }
    double a = fmin(lo.a, hi.a), b = fmax(lo.a, hi.a), w = b - a;
    if (!isfinite(t))
        return a + 0.5 * w;
    return fmin(fmax(t, a + 0.1 * w), b - 0.1 * w);
}

/* Algorithm 3.6.  'lo' satisfies sufficient decrease and has the lowest phi
 * seen; the bracket [lo, hi] (either order) contains strong-Wolfe steps.
 * Returns 1 with the accepted step in *out (the last point evaluated, so
 * l->xt and l->gt hold it), or 0 when the budget ran out. */
static int zoom(struct line *l, struct pt p0, struct pt lo, struct pt hi, struct pt *out)
{
    while (l->evals < LS_MAX_EVALS) {
        double a = interpolate(lo, hi);
        if (a == lo.a || a == hi.a)
            return 0;   /* bracket below rounding */
        struct pt t = phi(l, a);
        /* A step that meets the strong Wolfe conditions is what the search
         * is for: take it even when phi(a) ties phi(lo), which the book's
         * test "phi(a) >= phi(lo)" would send to the bracket's far end.
         * Near the minimum phi is flat to rounding and such ties are the
         * rule: the bracket then closed on 0 and the search gave up. */
        if (strong_wolfe(p0, t)) {
            *out = t;
            return 1;
        }
        if (approx_wolfe(p0, t)) {
            l->approx = 1;
            *out = t;
            return 1;
        }
        if (t.f > p0.f + C1 * a * p0.df || t.f >= lo.f) {
            hi = t;
        } else {
            if (t.df * (hi.a - lo.a) >= 0)
                hi = lo;
            lo = t;
        }
    }
    return 0;
}

/* Algorithm 3.5 from the first trial step a1 > 0.  Returns 1 with the
 * accepted step in *out (l->xt, l->gt hold x + a d and its gradient). */
static int wolfe_search(struct line *l, struct pt p0, double a1, struct pt *out)
{
    struct pt prev = p0;
    double a = a1;
    for (int i = 1; l->evals < LS_MAX_EVALS; i++) {
        struct pt t = phi(l, a);
        if (approx_wolfe(p0, t) && !strong_wolfe(p0, t)) {
            l->approx = 1;
            *out = t;
            return 1;
        }
        if (t.f > p0.f + C1 * a * p0.df || (i > 1 && t.f >= prev.f))
            return zoom(l, p0, prev, t, out);
        if (fabs(t.df) <= -C2 * p0.df) {
            *out = t;
            return 1;
        }
        if (t.df >= 0)
            return zoom(l, p0, t, prev, out);
        if (a >= ALPHA_MAX)
            return 0;
        /* Still descending with sufficient decrease: extrapolate.  The
         * book leaves the choice in (a_i, a_max) open; a factor of 4 is
         * common practice. */
        prev = t;
        a = fmin(4 * a, ALPHA_MAX);
    }
    return 0;
}

/* ---- L-BFGS (Algorithms 7.4 and 7.5) ---- */

/* The last m pairs s_i = x_{i+1} - x_i, y_i = g_{i+1} - g_i in a ring. */
struct memory {
    size_t n;
    int m, count, head;   /* oldest pair at head */
    double **s, **y;      /* (m) pairs of (n) rows, swapped in, not copied */
    double *rho;          /* (m), 1 / (y_i . s_i) */
    double *alpha;        /* (m), scratch of the two-loop recursion */
    double *ns, *ny;      /* (n) the newest pair, before it is stored */
    double *slab;         /* the 2 (m + 1) rows above */
};

/* d = -H_k g by the two-loop recursion (Algorithm 7.4); with no pairs
 * stored, H_k = I. */
static void direction(const struct memory *M, const double *g, double *d)
{
    size_t n = M->n;
    scaled(n, -1.0, g, d);
    if (M->count == 0)
        return;
    /* Each update of d is fused with the next dot product (axpy_dot): the
     * same operations as axpy then dot, in the same order. */
#define SLOT(c) ((M->head + (c)) % M->m)
    double sd = dot(n, M->s[SLOT(M->count - 1)], d);
    for (int c = M->count - 1; c >= 0; c--) {
        int i = SLOT(c);
        const double *y = M->y[i];
        double a = M->rho[i] * sd;
        M->alpha[i] = a;
        if (c > 0) /* d - a y, exactly: negation is exact; then s_{c-1} . d */
            sd = axpy_dot(n, -a, y, d, M->s[SLOT(c - 1)]);
        else
            axpy(n, -a, y, d, d);
    }
    /* H_k^0 = gamma_k I with gamma_k = s'y / y'y of the newest pair (7.20). */
    int newest = SLOT(M->count - 1);
    const double *yn = M->y[newest];
    double gamma = 1.0 / (M->rho[newest] * dot(n, yn, yn));
    scaled(n, gamma, d, d);
    double yd = dot(n, M->y[SLOT(0)], d);
    for (int c = 0; c < M->count; c++) {
        int i = SLOT(c);
        const double *sv = M->s[i];
        double beta = M->rho[i] * yd;
        if (c + 1 < M->count) /* then y_{c+1} . d */
            yd = axpy_dot(n, M->alpha[i] - beta, sv, d, M->y[SLOT(c + 1)]);
        else
            axpy(n, M->alpha[i] - beta, sv, d, d);
    }
#undef SLOT
}

/* ns = xt - x, ny = gt - g (as axpy with a = -1: exact), *sy = ns . ny and
 * *yy = ny . ny in vec4_dot's order: one pass for what two axpy and two
 * dot calls did, with the same bits. */
VEC4_CLONES static void pair_dots(size_t n, const double *x, const double *xt, const double *g, const double *gt,
                                  double *ns, double *ny, double *sy, double *yy)
{
    v4d m1 = VEC4_SPLAT(-1.0), a0 = VEC4_SPLAT(0.0), a1 = a0, b0 = a0, b1 = a0, p, q, u, v;
    size_t j = 0;
#define PAIR_LANES(off, A, B) \
    VEC4_LOAD(p, xt + j + (off)); \
    VEC4_LOAD(q, x + j + (off)); \
    p += m1 * q; \
    VEC4_STORE(ns + j + (off), p); \
    VEC4_LOAD(u, gt + j + (off)); \
    VEC4_LOAD(v, g + j + (off)); \
    u += m1 * v; \
    VEC4_STORE(ny + j + (off), u); \
    A += p * u; \
    B += u * u
    for (; j + 8 <= n; j += 8) {
        PAIR_LANES(0, a0, b0);
        PAIR_LANES(4, a1, b1);
    }
#undef PAIR_LANES
    a0 += a1;
    b0 += b1;
    double s = (a0[0] + a0[1]) + (a0[2] + a0[3]), w = (b0[0] + b0[1]) + (b0[2] + b0[3]);
    for (; j < n; j++) {
        ns[j] = xt[j] + -1.0 * x[j];
        ny[j] = gt[j] + -1.0 * g[j];
        s += ns[j] * ny[j];
        w += ny[j] * ny[j];
    }
    *sy = s;
    *yy = w;
}

/* Store the pair (xt - x, gt - g), dropping the oldest when full.  A pair
 * with s'y <= 0 would make H_k indefinite; the strong Wolfe conditions rule
 * it out in exact arithmetic (s'y >= (c2 - 1) alpha phi'(0) > 0), so it is
 * skipped only as a guard against rounding. */
static void remember(struct memory *M, const double *x, const double *xt,
                     const double *g, const double *gt)
{
    size_t n = M->n;
    double sy, yy;
    pair_dots(n, x, xt, g, gt, M->ns, M->ny, &sy, &yy);
    if (!(sy > 1e-300 && yy > 0))
        return;
    /* The pair's rows take the slot; the slot's old rows (the oldest pair,
     * or unused) become the scratch for the next pair. */
    int slot = M->count < M->m ? (M->head + M->count) % M->m : M->head;
    double *t = M->s[slot];
    M->s[slot] = M->ns;
    M->ns = t;
    t = M->y[slot];
    M->y[slot] = M->ny;
    M->ny = t;
    M->rho[slot] = 1.0 / sy;
    if (M->count < M->m)
        M->count++;
    else
        M->head = (M->head + 1) % M->m;
}

int lbfgs_minimize(size_t n, double *x, lbfgs_eval fn, void *ctx,
                   const struct lbfgs_params *p, struct lbfgs_result *r)
{
    static const struct lbfgs_params defaults = LBFGS_PARAMS_INIT;
    if (!p)
        p = &defaults;
    assert(n > 0 && p->m >= 1);
    struct memory M = { n, p->m, 0, 0, NULL, NULL, NULL, NULL, NULL, NULL, NULL };
    size_t rows = 2 * ((size_t)p->m + 1);
    M.slab = xcalloc(xmul(rows, n), sizeof *M.slab);
    M.s = xcalloc((size_t)p->m, sizeof *M.s);
    M.y = xcalloc((size_t)p->m, sizeof *M.y);
    for (int i = 0; i < p->m; i++) {
        M.s[i] = M.slab + (size_t)(2 * i) * n;
        M.y[i] = M.slab + (size_t)(2 * i + 1) * n;
    }
    M.ns = M.slab + (rows - 2) * n;
    M.ny = M.slab + (rows - 1) * n;
    M.rho = xcalloc((size_t)p->m, sizeof *M.rho);
    M.alpha = xcalloc((size_t)p->m, sizeof *M.alpha);
    double *g = xcalloc(n, sizeof *g);
    double *d = xcalloc(n, sizeof *d);
    double *xt = xcalloc(n, sizeof *xt);
    double *gt = xcalloc(n, sizeof *gt);

    double *const xout = x; /* the caller's: x and xt trade buffers below */
    struct line l = { n, x, d, xt, gt, fn, ctx, 0, 0 };
    double f = fn(ctx, x, g);
    int evals = 1, iters = 0, status;
    double gnorm = norm_inf(n, g);
    if (!isfinite(f) || !isfinite(gnorm)) {
        status = LBFGS_NO_STEP;
        goto out;
    }
    for (;;) {
        if (gnorm <= p->gtol) {
            status = LBFGS_GRADIENT;
            break;
        }
        if (iters >= p->max_iter) {
            status = LBFGS_MAX_ITER;
            break;
        }
        direction(&M, g, d);
        double dphi0 = dot(n, g, d);
        if (!(dphi0 < 0)) {
            /* Rounding made H_k g useless: restart from steepest descent. */
            M.count = M.head = 0;
            direction(&M, g, d);
            dphi0 = dot(n, g, d);
        }
        /* Quasi-Newton steps start at alpha = 1 (section 3.5); a steepest
         * descent step, unscaled, first moves a unit distance (common
         * practice). */
        double a1 = M.count ? 1.0 : fmin(1.0, 1.0 / sqrt(-dphi0));
        struct pt p0 = { 0, f, dphi0 }, acc;
        l.evals = 0;
        l.approx = 0;
        int ok = wolfe_search(&l, p0, a1, &acc);
        evals += l.evals;
        if (!ok) {
            if (M.count) {
                M.count = M.head = 0;   /* retry once along -g */
                continue;
            }
            status = LBFGS_NO_STEP;
            break;
        }
        iters++;
        remember(&M, x, xt, g, gt);
        double fprev = f;
        f = acc.f;
        /* the accepted point becomes the current one: swap, not copy */
        double *t = x;
        x = xt;
        xt = t;
        t = g;
        g = gt;
        gt = t;
        l.x = x;
        l.xt = xt;
        l.gt = gt;
        gnorm = norm_inf(n, g);
        if (p->watch) {
            struct lbfgs_step st = { iters, acc.a, p0.f, p0.df, acc.f, acc.df, gnorm, l.approx };
            p->watch(p->watch_ctx, &st);
        }
        if (gnorm <= p->gtol) {
            status = LBFGS_GRADIENT;
            break;
        }
        double scale = fmax(fmax(fabs(fprev), fabs(f)), 1.0);
        if (p->ftol > 0 && (fprev - f) / scale <= p->ftol) {
            status = LBFGS_DECREASE;
            break;
        }
    }
out:
    if (r) {
        r->iters = iters;
        r->evals = evals;
        r->status = status;
        r->converged = status == LBFGS_GRADIENT || status == LBFGS_DECREASE;
        r->f = f;
        r->gnorm = gnorm;
    }
    free(M.s);
    free(M.y);
    free(M.rho);
    free(M.alpha);
    free(M.slab);
    if (x != xout) {
        memcpy(xout, x, n * sizeof *x);
        xt = x; /* the buffer allocated here */
    }
    free(g);
    free(d);
    free(xt);
    free(gt);
    return status;
}
