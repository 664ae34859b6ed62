/* One fused pass per element over the four-node quadrilateral: every metric and validity
 * flag of meshaudit.metrics.quad.measure, written into preallocated arrays.
 *
 * The arithmetic is that of the numpy kernel, operation by operation and in the same
 * order (sums left to right, 3-D dot products as x, z, y as numpy's einsum takes them,
 * "+ 0.0" where the numpy kernel adds it to turn -0.0 into 0.0), so that built without
 * contraction of a * b + c into one fused multiply-add (-ffp-contract=off, never
 * -ffast-math) every product, sum, quotient and square root rounds as numpy's does.
 *
 * Arc tangents are not taken here: numpy's own vectorised arc tangent may differ from the
 * C library's in the last place, and it is several times faster. quad() writes the
 * arguments of every arc tangent an element needs into a scratch array, the caller takes
 * numpy.arctan2 of them, and quad_angles() finishes the metrics and the flag that depend
 * on them (skew, min_angle, max_angle, the warp of an element in space, nonconvex). So
 * every number equals the numpy kernel's to the bit.
 *
 * Inputs and outputs go through the buffer protocol (C-contiguous float64, one byte per
 * flag), so no numpy headers are needed to build this module.
 */
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <math.h>
#include <stdint.h>
#include <string.h>

/* Order of the rows of the output arrays; meshaudit.metrics.fused names them. */
enum {
    M_AREA, M_DET_MIN, M_DET_MAX, M_DET_CORNER_MIN, M_JACOBIAN_RATIO, M_SCALED_JACOBIAN,
    M_ASPECT, M_SKEW, M_TAPER, M_WARP, M_MIN_ANGLE, M_MAX_ANGLE, M_CONDITION, N_METRICS
};
enum { F_INVERTED, F_REVERSED, F_NONCONVEX, F_SELF_INTERSECTING, F_DEGENERATE, N_FLAGS };

/* Rows of the arc tangent scratch array: 0 skew, 1 and 2 the smallest and largest angle
 * of a convex counter-clockwise element, 3-6 the four corners of any other, 7 and 8 the
 * two diagonal splits' fold angles of an element in space. */
enum { T_SKEW, T_LOW, T_HIGH, T_CORNER, T_WARP = 7, N_TANGENTS = 9 };

/* Bits of an element's state byte, from quad() to quad_angles(). */
enum { S_CORNERS = 1, S_WARP_COUNTS_1 = 2, S_WARP_COUNTS_2 = 4 };

/* numpy's maximum and minimum of two doubles, (a >= b || isnan(a)) ? a : b and
 * (a <= b || isnan(a)) ? a : b: NaN propagates, and of two equal numbers (0.0 and -0.0)
 * the first is kept. Written as a NaN test, rarely taken, around "b > a ? b : a", which
 * compilers turn into one branch-free instruction with the same result. */
static inline double np_max(double a, double b) { return isnan(b) ? b : (b > a ? b : a); }
static inline double np_min(double a, double b) { return isnan(b) ? b : (b < a ? b : a); }
/* numpy's fmin: a NaN is ignored. */
static inline double np_fmin(double a, double b) { return (a <= b || isnan(b)) ? a : b; }

static inline double np_sign(double a)
{
    if (a > 0.0) return 1.0;
    if (a < 0.0) return -1.0;
    if (a == 0.0) return 0.0;
    return a; /* NaN */
}

typedef struct { double x, y, z; } vec3;

static inline double cross2(double ax, double ay, double bx, double by)
{
    return ax * by - ay * bx;
}

static inline vec3 sub3(vec3 a, vec3 b)
{
    vec3 r = {a.x - b.x, a.y - b.y, a.z - b.z};
    return r;
}

static inline vec3 cross3(vec3 a, vec3 b)
{
    vec3 r = {a.y * b.z - a.z * b.y, a.z * b.x - a.x * b.z, a.x * b.y - a.y * b.x};
    return r;
}

/* a . b as numpy's einsum sums three terms: (x + z) + y, then + 0.0. */
static inline double dot3(vec3 a, vec3 b)
{
    double t = a.x * b.x;
    t += a.z * b.z;
    t += a.y * b.y;
    return t + 0.0;
}

/* |a|^2 of a 3-D point, in the same order, without the + 0.0. */
static inline double square3(vec3 a)
{
    double t = a.x * a.x;
    t += a.z * a.z;
    t += a.y * a.y;
    return t;
}

/* The larger of the two splits' angles that count, or of both where neither does. */
static inline double larger_counted(double a0, int k0, double a1, int k1)
{
    double out = np_max(k0 ? a0 : -1.0, k1 ? a1 : -1.0);
    if (out < 0.0) out = np_max(a0, a1);
    return out;
}

/* Robinson's 4 e1, 4 e2, 4 e3 of one coordinate of the four nodes. */
static inline void axes4(const double v[4], double *e1, double *e2, double *e3)
{
    double a = v[0], b = v[1], c = v[2], d = v[3];
    double ba = b - a;
    *e1 = (ba + c) - d;
    *e2 = (c - (a + b)) + d;
    *e3 = (c - ba) - d;
}

typedef struct {
    double g;        /* 1 / sqrt(3), the Gauss point coordinate */
    double degrees;  /* 180 / pi */
    double tol;      /* relative tolerance of a collapsed element */
} constants;

/* Metrics of one element: ``pl`` its 4 x 2 nodes in the measuring plane, ``sp`` its
 * 4 x 3 nodes in space, ``flat`` whether the chunk lies in a plane z = c. */
static unsigned char quad_one(const double *pl, const double *sp, int flat, const constants *k,
                              double *m, unsigned char *f, double *ys, double *xs,
                              Py_ssize_t n)
{
    unsigned char state = 0;
    const double sixteenth = 1.0 / 16.0;
    double px[4], py[4];
    for (int i = 0; i < 4; i++) {
        px[i] = pl[2 * i];
        py[i] = pl[2 * i + 1];
    }

    /* -- det J, in the plane -- */
    double e1x, e2x, e3x, e1y, e2y, e3y;
    axes4(px, &e1x, &e2x, &e3x);
    axes4(py, &e1y, &e2y, &e3y);
    double c0 = cross2(e1x, e1y, e2x, e2y);
    double c1 = cross2(e1x, e1y, e3x, e3y);
    double c2 = cross2(e3x, e3y, e2x, e2y);
    double a1 = fabs(c1), a2 = fabs(c2);
    double g1 = a1 * k->g, g2 = a2 * k->g;
    double gauss_lo = ((c0 - g1) - g2) * sixteenth + 0.0;
    double gauss_hi = ((c0 + g1) + g2) * sixteenth + 0.0;
    double corner_lo = ((c0 - a1) - a2) * sixteenth + 0.0;
    double centre = c0 * sixteenth;

    /* -- Robinson's shape parameters -- */
    double q1 = e1x * e1x;
    q1 += e1y * e1y;
    double q2 = e2x * e2x;
    q2 += e2y * e2y;
    double abs_c0 = fabs(c0);
    double aspect = sqrt(np_max(q1, q2) / np_min(q1, q2));
    double d12 = e1x * e2x;
    d12 += e1y * e2y;
    d12 += 0.0;
    ys[0] = abs_c0; /* skew: from the angle between the principal axes */
    xs[0] = d12;
    double taper = np_max(a1, a2) / abs_c0;
    if (c0 == 0.0) {
        taper = INFINITY;
        if (isnan(aspect)) aspect = INFINITY;
    }

    /* -- corners: edge to the next node a, to the previous b -- */
    double nx[4], ny[4], sq[4], cr[4], dt[4], len[4];
    for (int i = 0; i < 4; i++) {
        int nxt = (i + 1) & 3, prv = (i + 3) & 3;
        nx[i] = px[nxt] - px[i];
        ny[i] = py[nxt] - py[i];
        double bx = px[prv] - px[i], by = py[prv] - py[i];
        double s = nx[i] * nx[i];
        s += ny[i] * ny[i];
        sq[i] = s;
        cr[i] = cross2(nx[i], ny[i], bx, by);
        dt[i] = nx[i] * bx + ny[i] * by;
        len[i] = sqrt(s);
    }
    int convex = cr[0] > 0.0 && cr[1] > 0.0 && cr[2] > 0.0 && cr[3] > 0.0;
    double orientation = 1.0 - 2.0 * (double)(c0 < 0.0);

    {
        double cot = dt[0] / cr[0];
        double cot_lo = cot, cot_hi = cot;
        for (int i = 1; i < 4; i++) {
            cot = dt[i] / cr[i];
            cot_lo = np_min(cot_lo, cot);
            cot_hi = np_max(cot_hi, cot);
        }
        ys[n] = 1.0; /* smallest angle of a convex, counter-clockwise element */
        xs[n] = cot_hi;
        ys[2 * n] = 1.0; /* largest */
        xs[2 * n] = cot_lo;
        if (!(convex && orientation > 0.0)) {
            state |= S_CORNERS;
            for (int i = 0; i < 4; i++) {
                ys[(3 + i) * n] = orientation * cr[i];
                xs[(3 + i) * n] = dt[i] + 0.0;
            }
        }
    }

    double scaled = 0.0, condition = 0.0, longest = 0.0;
    for (int i = 0; i < 4; i++) {
        int prv = (i + 3) & 3;
        double v = cr[i] / (len[i] * len[prv]);
        double w = (sq[i] + sq[prv]) / cr[i];
        scaled = i ? np_min(scaled, v) : v;
        condition = i ? np_max(condition, w) : w;
        longest = i ? np_max(longest, len[i]) : len[i];
    }
    if (isnan(scaled)) { /* 0/0 at a corner with a zero edge counts as 0 */
        scaled = 0.0;
        for (int i = 0; i < 4; i++)
            scaled = np_fmin(scaled, cr[i] / (len[i] * len[(i + 3) & 3]));
    }
    scaled += 0.0;
    condition *= 0.5;
    if (!convex) condition = INFINITY;

    /* bow-tie: opposite edges cross properly */
    int crossing;
    {
        double d13x = px[2] - px[0], d13y = py[2] - py[0];
        double d24x = px[3] - px[1], d24y = py[3] - py[1];
        int first = (cross2(nx[0], ny[0], d13x, d13y) * cr[0] < 0.0) &&
                    (cross2(nx[2], ny[2], d13x, d13y) * cr[2] > 0.0);
        int second = (cross2(nx[1], ny[1], d24x, d24y) * cr[1] < 0.0) &&
                     (cross2(nx[3], ny[3], d24x, d24y) * cr[3] > 0.0);
        crossing = first || second;
    }

    /* -- area, warp and collapse, from the nodes in space -- */
    vec3 x[4];
    for (int i = 0; i < 4; i++) {
        x[i].x = sp[3 * i];
        x[i].y = sp[3 * i + 1];
        x[i].z = flat ? 0.0 : sp[3 * i + 2];
    }
    double area, swept, warp, shortest2, longest2;
    if (flat) {
        double sx[4], sy[4];
        for (int i = 0; i < 4; i++) {
            sx[i] = x[(i + 1) & 3].x - x[i].x;
            sy[i] = x[(i + 1) & 3].y - x[i].y;
        }
        double vx[4] = {x[0].x, x[1].x, x[2].x, x[3].x};
        double vy[4] = {x[0].y, x[1].y, x[2].y, x[3].y};
        double f1x, f2x, f3x, f1y, f2y, f3y;
        axes4(vx, &f1x, &f2x, &f3x);
        axes4(vy, &f1y, &f2y, &f3y);
        double ux = f3x * k->g, uy = f3y * k->g;
        double xi0x = f1x - ux, xi0y = f1y - uy, xi1x = f1x + ux, xi1y = f1y + uy;
        double et0x = f2x - ux, et0y = f2y - uy, et1x = f2x + ux, et1y = f2y + uy;
        double n0 = cross2(xi0x, xi0y, et0x, et0y);
        double n1 = cross2(xi0x, xi0y, et1x, et1y);
        double n2 = cross2(xi1x, xi1y, et1x, et1y);
        double n3 = cross2(xi1x, xi1y, et0x, et0y);
        area = fabs(((n0 + n1) + n2) + n3) * sixteenth;
        swept = fabs(n0);
        swept += fabs(n1);
        swept += fabs(n2);
        swept += fabs(n3);
        swept *= sixteenth;

        double d13x = x[2].x - x[0].x, d13y = x[2].y - x[0].y;
        double d24x = x[3].x - x[1].x, d24y = x[3].y - x[1].y;
        double fa = cross2(sx[0], sy[0], d13x, d13y);
        double fb = cross2(sx[3], sy[3], d13x, d13y);
        warp = 0.0;
        if (!(fa * fb > 0.0)) {
            double normal = cross2(d13x, d13y, d24x, d24y);
            double sa = cross2(sx[1], sy[1], d24x, d24y);
            double sb = cross2(sx[0], sy[0], d24x, d24y);
            warp = larger_counted(fa * fb < 0.0 ? 180.0 : 0.0,
                                  (fa * normal >= 0.0) && (fb * normal >= 0.0),
                                  sa * sb < 0.0 ? 180.0 : 0.0,
                                  (sa * normal >= 0.0) && (sb * normal >= 0.0));
        }
        double s0 = 0.0, s1 = 0.0;
        for (int i = 0; i < 4; i++) {
            double s = sx[i] * sx[i];
            s += sy[i] * sy[i];
            s0 = i ? np_min(s0, s) : s;
            s1 = i ? np_max(s1, s) : s;
        }
        double q = d13x * d13x;
        q += d13y * d13y;
        s0 = np_min(s0, q);
        q = d24x * d24x;
        q += d24y * d24y;
        s0 = np_min(s0, q);
        shortest2 = s0;
        longest2 = s1;
    } else {
        vec3 side[4];
        for (int i = 0; i < 4; i++) side[i] = sub3(x[(i + 1) & 3], x[i]);
        double vx[4] = {x[0].x, x[1].x, x[2].x, x[3].x};
        double vy[4] = {x[0].y, x[1].y, x[2].y, x[3].y};
        double vz[4] = {x[0].z, x[1].z, x[2].z, x[3].z};
        vec3 f1, f2, f3;
        axes4(vx, &f1.x, &f2.x, &f3.x);
        axes4(vy, &f1.y, &f2.y, &f3.y);
        axes4(vz, &f1.z, &f2.z, &f3.z);
        vec3 u = {f3.x * k->g, f3.y * k->g, f3.z * k->g};
        vec3 xi0 = sub3(f1, u), et0 = sub3(f2, u);
        vec3 xi1 = {f1.x + u.x, f1.y + u.y, f1.z + u.z};
        vec3 et1 = {f2.x + u.x, f2.y + u.y, f2.z + u.z};
        vec3 nrm[4] = {cross3(xi0, et0), cross3(xi0, et1), cross3(xi1, et1), cross3(xi1, et0)};
        vec3 tot = {((nrm[0].x + nrm[1].x) + nrm[2].x) + nrm[3].x,
                    ((nrm[0].y + nrm[1].y) + nrm[2].y) + nrm[3].y,
                    ((nrm[0].z + nrm[1].z) + nrm[2].z) + nrm[3].z};
        double size[4];
        for (int i = 0; i < 4; i++) size[i] = sqrt(dot3(nrm[i], nrm[i]));
        area = np_sign(dot3(nrm[0], tot)) * size[0];
        for (int i = 1; i < 4; i++) area += np_sign(dot3(nrm[i], tot)) * size[i];
        swept = size[0] + size[1];
        swept += size[2];
        swept += size[3];
        area *= sixteenth;
        swept *= sixteenth;

        vec3 d13 = sub3(x[2], x[0]), d24 = sub3(x[3], x[1]);
        vec3 normal = cross3(d13, d24);
        for (int s = 0; s < 2; s++) {
            vec3 na = s ? cross3(side[1], d24) : cross3(side[0], d13);
            vec3 nb = s ? cross3(side[0], d24) : cross3(side[3], d13);
            vec3 c = cross3(na, nb);
            ys[(7 + s) * n] = sqrt(dot3(c, c));
            xs[(7 + s) * n] = dot3(na, nb);
            if ((dot3(na, normal) >= 0.0) && (dot3(nb, normal) >= 0.0))
                state |= s ? S_WARP_COUNTS_2 : S_WARP_COUNTS_1;
        }
        warp = NAN; /* from the angles, in quad_angles */
        double s0 = 0.0, s1 = 0.0;
        for (int i = 0; i < 4; i++) {
            double s = square3(side[i]);
            s0 = i ? np_min(s0, s) : s;
            s1 = i ? np_max(s1, s) : s;
        }
        s0 = np_min(s0, square3(d13));
        s0 = np_min(s0, square3(d24));
        shortest2 = s0;
        longest2 = s1;
    }
    double shortest_edge = sqrt(shortest2), longest_edge = sqrt(longest2);
    int collapsed = !(longest_edge > 0.0) || (shortest_edge <= k->tol * longest_edge) ||
                    !(fabs(swept) > k->tol * (longest_edge * longest_edge));

    /* -- flags -- */
    int bowtie = crossing && !collapsed;
    double big = np_max(longest, 1e-300);
    double threshold = -1e-12 * (big * big);
    f[F_INVERTED] = (corner_lo < threshold) && !collapsed;
    f[F_REVERSED] = (centre < threshold) && !collapsed && !bowtie;
    f[F_NONCONVEX] = 0; /* from the angles, in quad_angles */
    f[F_SELF_INTERSECTING] = bowtie;
    f[F_DEGENERATE] = collapsed;

    double ratio = gauss_hi / gauss_lo;
    if (!(gauss_lo > 0.0)) ratio = INFINITY;
    m[M_AREA] = area;
    m[M_DET_MIN] = gauss_lo;
    m[M_DET_MAX] = gauss_hi;
    m[M_DET_CORNER_MIN] = corner_lo;
    m[M_JACOBIAN_RATIO] = ratio;
    m[M_SCALED_JACOBIAN] = scaled;
    m[M_ASPECT] = aspect;
    m[M_SKEW] = NAN;
    m[M_TAPER] = taper;
    m[M_WARP] = warp;
    m[M_MIN_ANGLE] = NAN;
    m[M_MAX_ANGLE] = NAN;
    m[M_CONDITION] = condition;
    return state;
}

/* True when every node has the z of the first element's first node (NaN never is). */
static int flat_in_z(const double *sp, Py_ssize_t n)
{
    if (n == 0) return 1;
    double z0 = sp[2];
    for (Py_ssize_t i = 0; i < 4 * n; i++)
        if (!(sp[3 * i + 2] == z0)) return 0;
    return 1;
}

/* Take a C-contiguous buffer of ``itemsize`` bytes per item and the given shape
 * (-1: any). Returns 0 on success; on failure sets an exception. */
static int get_buffer(PyObject *obj, Py_buffer *view, int writable, Py_ssize_t itemsize,
                      char kind, int ndim, const Py_ssize_t *shape, const char *what)
{
    int flags = PyBUF_C_CONTIGUOUS | PyBUF_FORMAT | (writable ? PyBUF_WRITABLE : 0);
    if (PyObject_GetBuffer(obj, view, flags) < 0) return -1;
    const char *fmt = view->format ? view->format : "B";
    if (fmt[0] == '<' || fmt[0] == '=' || fmt[0] == '@') fmt++;
    int ok = view->itemsize == itemsize && view->ndim == ndim &&
             (kind == 'd' ? strcmp(fmt, "d") == 0
                          : (strcmp(fmt, "?") == 0 || strcmp(fmt, "B") == 0));
    for (int i = 0; ok && i < ndim; i++)
        if (shape[i] >= 0 && view->shape[i] != shape[i]) ok = 0;
    if (!ok) {
        PyBuffer_Release(view);
        PyErr_Format(PyExc_ValueError, "%s: wrong type or shape", what);
        return -1;
    }
    return 0;
}

#define MAX_BUFFERS 8

typedef struct {
    Py_buffer views[MAX_BUFFERS];
    int count;
} buffers;

static void release(buffers *b)
{
    while (b->count > 0) PyBuffer_Release(&b->views[--b->count]);
}

static void *take(buffers *b, PyObject *obj, int writable, Py_ssize_t itemsize, char kind,
                  int ndim, const Py_ssize_t *shape, const char *what)
{
    if (get_buffer(obj, &b->views[b->count], writable, itemsize, kind, ndim, shape, what) < 0)
        return NULL;
    return b->views[b->count++].buf;
}

/* ------------------------------------------------------------------------------------
 * The trilinear hexahedron (meshaudit.metrics.solid.hexahedron, cell type "hexahedron").
 *
 * Not to the bit: the numpy kernel takes the principal axes and det J by matrix products
 * and einsum, whose order of summation (and use of fused multiply-add) is numpy's and the
 * BLAS's own, so these metrics agree to round-off (a few units in the last place of the
 * element's own scale), not to the bit. Elements whose det J bound needs refining
 * (smallest Bernstein coefficient below the floor, no value found below it) are marked
 * and measured again by the numpy kernel, whole.
 * ---------------------------------------------------------------------------------- */
static const int HEX_EDGES[12][2] = {{0, 1}, {1, 2}, {2, 3}, {3, 0}, {4, 5}, {5, 6},
                                     {6, 7}, {7, 4}, {0, 4}, {1, 5}, {2, 6}, {3, 7}};
static const int HEX_FACES[6][4] = {{0, 4, 7, 3}, {1, 2, 6, 5}, {0, 1, 5, 4},
                                    {3, 7, 6, 2}, {0, 3, 2, 1}, {4, 5, 6, 7}};
static const int HEX_TRIPLES[8][3] = {{1, 3, 4}, {2, 0, 5}, {3, 1, 6}, {0, 2, 7},
                                      {7, 5, 0}, {4, 6, 1}, {5, 7, 2}, {6, 4, 3}};
static const int HEX_EDGE_FACES[12][2] = {{2, 4}, {1, 4}, {3, 4}, {0, 4}, {5, 2}, {5, 1},
                                          {5, 3}, {5, 0}, {0, 2}, {2, 1}, {1, 3}, {3, 0}};
static const double HEX_CORNERS[8][3] = {{-1, -1, -1}, {1, -1, -1}, {1, 1, -1}, {-1, 1, -1},
                                         {-1, -1, 1}, {1, -1, 1}, {1, 1, 1}, {-1, 1, 1}};

enum {
    H_VOLUME, H_DET_MIN, H_DET_MAX, H_DET_CORNER_MIN, H_DET_LOWER, H_JACOBIAN_RATIO,
    H_SCALED_JACOBIAN, H_CONDITION, H_ASPECT, H_SKEW, H_TAPER, H_WARP, H_EDGE_RATIO,
    H_MIN_ANGLE, H_MAX_ANGLE, H_MIN_DIHEDRAL, H_MAX_DIHEDRAL, N_HEX_METRICS
};
enum { HF_INVERTED, HF_REVERSED, HF_DEGENERATE, HF_NONCONVEX, HF_SELF_INTERSECTING, N_HEX_FLAGS };
/* Rows of the hexahedron's arc tangent scratch: 0-2 the axis pairs, 3-14 the faces'
 * diagonal splits (3 + 2 face + split), 15-38 the face corners (15 + 4 face + corner),
 * 39-50 the edges' dihedral angles. */
enum { HT_SKEW = 0, HT_FOLD = 3, HT_CORNER = 15, HT_DIHEDRAL = 39, N_HEX_TANGENTS = 51 };

static inline vec3 add3(vec3 a, vec3 b)
{
    vec3 r = {a.x + b.x, a.y + b.y, a.z + b.z};
    return r;
}

static inline vec3 scale3(vec3 a, double t)
{
    vec3 r = {a.x * t, a.y * t, a.z * t};
    return r;
}

/* Weights of the corners in e_k: the monomial m_k (1, xi, eta, zeta, xi eta, eta zeta,
 * zeta xi, xi eta zeta) at each corner, over 8. */
#define W(a) ((a) / 8.0)
static const double HEX_AXIS_WEIGHTS[8][8] = {
    {W(1), W(1), W(1), W(1), W(1), W(1), W(1), W(1)},
    {W(-1), W(1), W(1), W(-1), W(-1), W(1), W(1), W(-1)},
    {W(-1), W(-1), W(1), W(1), W(-1), W(-1), W(1), W(1)},
    {W(-1), W(-1), W(-1), W(-1), W(1), W(1), W(1), W(1)},
    {W(1), W(-1), W(1), W(-1), W(1), W(-1), W(1), W(-1)},
    {W(1), W(1), W(-1), W(-1), W(-1), W(-1), W(1), W(1)},
    {W(1), W(-1), W(-1), W(1), W(-1), W(1), W(1), W(-1)},
    {W(-1), W(1), W(-1), W(1), W(1), W(-1), W(1), W(-1)},
};
#undef W

static inline double dot3p(vec3 a, vec3 b) { return a.x * b.x + a.y * b.y + a.z * b.z; }

static inline double len3(vec3 a) { return sqrt(dot3p(a, a)); }

/* Returns 1 when the element needs the numpy kernel (its det J bound to be refined). */
static int hex_one(const double *xyz, const double *at_gauss, double floor_tol, double tol,
                   double flat_diagonals, double *m, unsigned char *f, double *ys, double *xs,
                   Py_ssize_t n, uint64_t *corner_bits, unsigned *fold_bits)
{
    vec3 c[8];
    for (int i = 0; i < 8; i++) {
        c[i].x = xyz[3 * i];
        c[i].y = xyz[3 * i + 1];
        c[i].z = xyz[3 * i + 2];
    }
    /* -- edges, coincident corners (a square root is monotonic: taken of the extremes) -- */
    double longest2 = 0.0, shortest2 = 0.0;
    for (int e = 0; e < 12; e++) {
        vec3 d = sub3(c[HEX_EDGES[e][1]], c[HEX_EDGES[e][0]]);
        double l = dot3p(d, d);
        longest2 = e ? np_max(longest2, l) : l;
        shortest2 = e ? np_min(shortest2, l) : l;
    }
    double longest = sqrt(longest2), shortest = sqrt(shortest2);
    double edge_ratio = shortest == 0.0 ? INFINITY : longest / shortest;
    double gap2 = 0.0;
    int first = 1;
    for (int i = 0; i < 8; i++)
        for (int j = i + 1; j < 8; j++) {
            vec3 d = sub3(c[j], c[i]);
            double l = dot3p(d, d);
            gap2 = first ? l : np_min(gap2, l);
            first = 0;
        }
    int coincident = !(sqrt(gap2) > tol * longest);

    /* -- principal axes: x = e0 + e1 xi + e2 eta + e3 zeta + e4 xi eta + e5 eta zeta
     *    + e6 zeta xi + e7 xi eta zeta, e_k = 1/8 sum_i m_k(corner i) x_i -- */
    vec3 e[8];
    for (int k = 1; k < 8; k++) {
        vec3 sum = {0.0, 0.0, 0.0};
        for (int i = 0; i < 8; i++) {
            double w = HEX_AXIS_WEIGHTS[k][i];
            sum.x += w * c[i].x;
            sum.y += w * c[i].y;
            sum.z += w * c[i].z;
        }
        e[k] = sum;
    }
    double s1 = len3(e[1]), s2 = len3(e[2]), s3 = len3(e[3]);
    double aspect = np_max(np_max(s1, s2), s3) / np_min(np_min(s1, s2), s3);
    if (isnan(aspect)) aspect = INFINITY;
    for (int p = 0; p < 3; p++) {
        vec3 a = e[1 + p], b = e[1 + (p + 1) % 3];
        ys[(HT_SKEW + p) * n] = len3(cross3(a, b));
        xs[(HT_SKEW + p) * n] = dot3p(a, b);
    }
    vec3 dual[3] = {cross3(e[2], e[3]), cross3(e[3], e[1]), cross3(e[1], e[2])};
    double axes_volume = dot3p(e[1], dual[0]);
    static const int parts[6][2] = {{4, 0}, {4, 1}, {5, 1}, {5, 2}, {6, 2}, {6, 0}};
    double big = 0.0;
    for (int q = 0; q < 6; q++) {
        double v = fabs(dot3p(dual[parts[q][1]], e[parts[q][0]]));
        big = q ? np_max(big, v) : v;
    }
    double taper = axes_volume == 0.0 ? INFINITY : big / fabs(axes_volume);

    /* -- corners: determinants, scaled Jacobian, condition number -- */
    double corner_det[8], scaled = 0.0, condition = 0.0, det_sum = 0.0;
    for (int i = 0; i < 8; i++) {
        vec3 a = sub3(c[HEX_TRIPLES[i][0]], c[i]);
        vec3 b = sub3(c[HEX_TRIPLES[i][1]], c[i]);
        vec3 d = sub3(c[HEX_TRIPLES[i][2]], c[i]);
        vec3 bd = cross3(b, d), da = cross3(d, a), ab = cross3(a, b);
        double det = dot3p(a, bd);
        double la = dot3p(a, a), lb = dot3p(b, b), ld = dot3p(d, d);
        double scale = sqrt(la * lb * ld);
        double sj = scale > 0.0 ? det / scale : 0.0;
        double frob = sqrt((la + lb + ld) * (dot3p(bd, bd) + dot3p(da, da) + dot3p(ab, ab)));
        double cond = det > 0.0 ? frob / (3.0 * det) : INFINITY;
        scaled = i ? np_min(scaled, sj) : sj;
        condition = i ? np_max(condition, cond) : cond;
        corner_det[i] = det;
        det_sum += det;
    }
    double orientation = det_sum < 0.0 ? -1.0 : 1.0;

    /* -- faces: warp, corner angles, crossing pattern -- */
    vec3 normal[6];
    int crossing = 0, reentrant = 0;
    unsigned folds = 0;
    uint64_t bits = 0;
    for (int fc = 0; fc < 6; fc++) {
        vec3 p[4];
        for (int k = 0; k < 4; k++) p[k] = c[HEX_FACES[fc][k]];
        vec3 d13 = sub3(p[2], p[0]), d24 = sub3(p[3], p[1]);
        vec3 nrm = cross3(d13, d24);
        normal[fc] = nrm;
        vec3 u[2] = {cross3(sub3(p[1], p[0]), d13), cross3(sub3(p[2], p[1]), d24)};
        vec3 v[2] = {cross3(d13, sub3(p[3], p[0])), cross3(d24, sub3(p[0], p[1]))};
        for (int s = 0; s < 2; s++) {
            ys[(HT_FOLD + 2 * fc + s) * n] = len3(cross3(u[s], v[s]));
            xs[(HT_FOLD + 2 * fc + s) * n] = dot3p(u[s], v[s]);
            if (dot3p(u[s], nrm) >= 0.0 && dot3p(v[s], nrm) >= 0.0) folds |= 1u << (2 * fc + s);
        }
        vec3 cn[4], nx[4], pv[4];
        double size[4];
        int pick = 0;
        for (int k = 0; k < 4; k++) {
            nx[k] = sub3(p[(k + 1) & 3], p[k]);
            pv[k] = sub3(p[(k + 3) & 3], p[k]);
            cn[k] = cross3(nx[k], pv[k]);
            size[k] = len3(cn[k]);
            if (!(size[pick] >= size[k]) && !isnan(size[pick])) pick = k; /* first largest */
        }
        int flat = !(len3(nrm) > flat_diagonals * len3(d13) * len3(d24));
        vec3 ref = flat ? cn[pick] : nrm;
        int count = 0;
        for (int k = 0; k < 4; k++) {
            int against = dot3p(cn[k], ref) < 0.0;
            count += against;
            int slot = 4 * fc + k;
            ys[(HT_CORNER + slot) * n] = size[k];
            xs[(HT_CORNER + slot) * n] = dot3p(nx[k], pv[k]);
            if (against) bits |= (uint64_t)1 << slot;
            if (size[k] == 0.0) bits |= (uint64_t)1 << (24 + slot);
        }
        crossing |= count == 2;
        reentrant |= count == 1 || count == 3;
    }
    for (int ed = 0; ed < 12; ed++) {
        vec3 n1 = normal[HEX_EDGE_FACES[ed][0]], n2 = normal[HEX_EDGE_FACES[ed][1]];
        vec3 along = sub3(c[HEX_EDGES[ed][1]], c[HEX_EDGES[ed][0]]);
        vec3 turn = cross3(n1, n2);
        double sign = dot3p(turn, along) >= 0.0 ? orientation : -orientation;
        ys[(HT_DIHEDRAL + ed) * n] = sign * len3(turn);
        xs[(HT_DIHEDRAL + ed) * n] = dot3p(n1, n2);
    }
    *corner_bits = bits;
    *fold_bits = folds;

    /* -- det J: at the 27 points (-1, 0, 1)^3, Bernstein coefficients, Gauss points -- */
    /* x_xi = e1 + e4 eta + e6 zeta + e7 eta zeta, and so on, at the points (-1, 0, 1)^3;
     * each derivative depends on two of the three coordinates: 9 of each */
    vec3 d_xi[9], d_eta[9], d_zeta[9];
    for (int a = 0; a < 3; a++)
        for (int b = 0; b < 3; b++) {
            double u = a - 1.0, v = b - 1.0;
            /* d_xi at (eta, zeta) = (u, v); d_eta at (xi, zeta); d_zeta at (xi, eta) */
            d_xi[a + 3 * b] = add3(add3(e[1], scale3(e[4], u)), add3(scale3(e[6], v), scale3(e[7], u * v)));
            d_eta[a + 3 * b] = add3(add3(e[2], scale3(e[4], u)), add3(scale3(e[5], v), scale3(e[7], u * v)));
            d_zeta[a + 3 * b] = add3(add3(e[3], scale3(e[6], u)), add3(scale3(e[5], v), scale3(e[7], u * v)));
        }
    double val[27];
    for (int kz = 0; kz < 3; kz++)
        for (int jy = 0; jy < 3; jy++)
            for (int ix = 0; ix < 3; ix++)
                val[ix + 3 * jy + 9 * kz] = dot3p(
                    d_xi[jy + 3 * kz], cross3(d_eta[ix + 3 * kz], d_zeta[ix + 3 * jy]));
    /* values -> Bernstein coefficients along each axis: c0 = v0, c1 = 2 v1 - (v0 + v2) / 2,
     * c2 = v2 (the inverse of the degree-2 basis at u = 0, 1/2, 1) */
    static const int strides[3] = {1, 3, 9};
    for (int axis = 0; axis < 3; axis++) {
        int stride = strides[axis];
        for (int a = 0; a < 3; a++)
            for (int b = 0; b < 3; b++) {
                /* the middle point of the line along this axis through (a, b) */
                int idx = axis == 0 ? 1 + 3 * a + 9 * b : axis == 1 ? a + 3 + 9 * b : a + 3 * b + 9;
                double v0 = val[idx - stride], v1 = val[idx], v2 = val[idx + stride];
                val[idx] = (-0.5 * v0 + 2.0 * v1) + -0.5 * v2;
            }
    }
    double lower = val[0], largest = fabs(val[0]);
    for (int i = 1; i < 27; i++) {
        lower = np_min(lower, val[i]);
        largest = np_max(largest, fabs(val[i]));
    }
    static const int corner_index[8] = {0, 2, 8, 6, 18, 20, 26, 24};
    /* det J at the Gauss points: the 1-D Bernstein basis there, along xi, eta, zeta */
    double along_x[2][9], along_y[2][2][3], gauss[8], g_lo = 0.0, g_hi = 0.0, volume = 0.0;
    for (int a = 0; a < 2; a++)
        for (int r = 0; r < 9; r++)
            along_x[a][r] = (at_gauss[3 * a] * val[3 * r] + at_gauss[3 * a + 1] * val[3 * r + 1]) +
                            at_gauss[3 * a + 2] * val[3 * r + 2];
    for (int a = 0; a < 2; a++)
        for (int b2 = 0; b2 < 2; b2++)
            for (int kz = 0; kz < 3; kz++)
                along_y[a][b2][kz] = (at_gauss[3 * b2] * along_x[a][3 * kz] +
                                      at_gauss[3 * b2 + 1] * along_x[a][3 * kz + 1]) +
                                     at_gauss[3 * b2 + 2] * along_x[a][3 * kz + 2];
    for (int g = 0; g < 8; g++) {
        const double *w = at_gauss + 3 * (g >> 2);
        const double *v = along_y[g & 1][(g >> 1) & 1];
        double sum = (w[0] * v[0] + w[1] * v[1]) + w[2] * v[2];
        gauss[g] = sum;
        g_lo = g ? np_min(g_lo, sum) : sum;
        g_hi = g ? np_max(g_hi, sum) : sum;
        volume += sum;
    }
    double floor = -floor_tol * (longest * longest * longest);
    double nodal_min = 0.0;
    int all_below = 1, mixed_low = 0, mixed_high = 0;
    for (int i = 0; i < 8; i++) {
        double v = val[corner_index[i]];
        nodal_min = i ? np_min(nodal_min, v) : v;
        all_below &= v < floor;
        double corner = corner_det[i] / 8.0;
        mixed_low |= corner < floor;
        mixed_high |= corner > -floor;
    }
    for (int g = 0; g < 8; g++) all_below &= gauss[g] < floor;
    double found = np_min(g_lo, nodal_min);
    int refine = (lower < floor) && (found >= floor);

    int flat_volume = !(8.0 * largest > tol * (longest * longest * longest));
    int degenerate = coincident || flat_volume;
    int valid = !degenerate;
    int cross_flag = crossing && valid;
    f[HF_INVERTED * n] = (lower < floor) && valid;
    f[HF_REVERSED * n] = all_below && valid;
    f[HF_DEGENERATE * n] = degenerate;
    f[HF_NONCONVEX * n] = ((mixed_low && mixed_high) || reentrant) && valid && !cross_flag;
    f[HF_SELF_INTERSECTING * n] = cross_flag;

    m[H_VOLUME * n] = volume + 0.0;
    m[H_DET_MIN * n] = g_lo + 0.0;
    m[H_DET_MAX * n] = g_hi + 0.0;
    m[H_DET_CORNER_MIN * n] = nodal_min + 0.0;
    m[H_DET_LOWER * n] = ((lower < 0.0 && lower >= floor) ? 0.0 : lower) + 0.0;
    m[H_JACOBIAN_RATIO * n] = g_lo > 0.0 ? g_hi / g_lo : INFINITY;
    m[H_SCALED_JACOBIAN * n] = scaled + 0.0;
    m[H_CONDITION * n] = condition + 0.0;
    m[H_ASPECT * n] = aspect + 0.0;
    m[H_TAPER * n] = taper + 0.0;
    m[H_EDGE_RATIO * n] = edge_ratio + 0.0;
    return refine;
}

PyDoc_STRVAR(hexahedron_doc,
"hexahedron(coords, metrics, flags, tangents, state, refine, at_gauss, floor_tolerance,\n"
"           tolerance, flat_diagonals)\n\n"
"First part of the pass over n trilinear hexahedra ``coords`` (n, 8, 3): writes\n"
"``metrics`` (17, n) and ``flags`` (5, n) but for the angles, whose arc tangent\n"
"arguments go to ``tangents`` (2, 51, n) and ``state`` (2, n) uint64; ``refine`` (n,)\n"
"bool marks the elements whose det J bound the numpy kernel must refine.");

static PyObject *hexahedron(PyObject *self, PyObject *args)
{
    PyObject *o[7];
    double floor_tol, tol, flat_diagonals;
    buffers b = {.count = 0};
    (void)self;
    if (!PyArg_ParseTuple(args, "OOOOOOOddd", &o[0], &o[1], &o[2], &o[3], &o[4], &o[5], &o[6],
                          &floor_tol, &tol, &flat_diagonals))
        return NULL;
    Py_ssize_t shape_c[3] = {-1, 8, 3};
    const double *xyz = take(&b, o[0], 0, 8, 'd', 3, shape_c, "coords");
    if (!xyz) return NULL;
    Py_ssize_t n = b.views[0].shape[0];
    Py_ssize_t shape_m[2] = {N_HEX_METRICS, n}, shape_f[2] = {N_HEX_FLAGS, n};
    Py_ssize_t shape_t[3] = {2, N_HEX_TANGENTS, n}, shape_s[2] = {2, n}, shape_r[1] = {n};
    Py_ssize_t shape_g[2] = {2, 3};
    double *mo = take(&b, o[1], 1, 8, 'd', 2, shape_m, "metrics");
    unsigned char *fo = mo ? take(&b, o[2], 1, 1, 'b', 2, shape_f, "flags") : NULL;
    double *to = fo ? take(&b, o[3], 1, 8, 'd', 3, shape_t, "tangents") : NULL;
    uint64_t *so = NULL;
    if (to && PyObject_GetBuffer(o[4], &b.views[b.count], PyBUF_C_CONTIGUOUS | PyBUF_WRITABLE) == 0) {
        Py_buffer *v = &b.views[b.count++];
        if (v->len == 2 * n * 8) so = v->buf;
        else PyErr_SetString(PyExc_ValueError, "state: wrong size");
    }
    unsigned char *ro = so ? take(&b, o[5], 1, 1, 'b', 1, shape_r, "refine") : NULL;
    const double *ag = ro ? take(&b, o[6], 0, 8, 'd', 2, shape_g, "at_gauss") : NULL;
    if (!ag) {
        release(&b);
        return NULL;
    }
    Py_ssize_t refine = 0;
    Py_BEGIN_ALLOW_THREADS
    double *ys = to, *xs = to + N_HEX_TANGENTS * n;
    for (Py_ssize_t i = 0; i < n; i++) {
        unsigned folds;
        uint64_t bits;
        int r = hex_one(xyz + 24 * i, ag, floor_tol, tol, flat_diagonals, mo + i, fo + i,
                        ys + i, xs + i, n, &bits, &folds);
        so[i] = bits;
        so[n + i] = folds;
        ro[i] = (unsigned char)r;
        refine += r;
    }
    Py_END_ALLOW_THREADS
    release(&b);
    (void)shape_s;
    return PyLong_FromSsize_t(refine);
}

PyDoc_STRVAR(hexahedron_angles_doc,
"hexahedron_angles(angles, state, metrics, degrees)\n\n"
"Second part: ``angles`` (51, n), numpy.arctan2 of ``tangents``; finishes skew, warp,\n"
"min_angle, max_angle, min_dihedral and max_dihedral.");

static PyObject *hexahedron_angles(PyObject *self, PyObject *args)
{
    PyObject *o[3];
    double degrees;
    buffers b = {.count = 0};
    (void)self;
    if (!PyArg_ParseTuple(args, "OOOd", &o[0], &o[1], &o[2], &degrees)) return NULL;
    Py_ssize_t shape_a[2] = {N_HEX_TANGENTS, -1};
    const double *an = take(&b, o[0], 0, 8, 'd', 2, shape_a, "angles");
    if (!an) return NULL;
    Py_ssize_t n = b.views[0].shape[1];
    Py_ssize_t shape_m[2] = {N_HEX_METRICS, n};
    const uint64_t *st = NULL;
    if (PyObject_GetBuffer(o[1], &b.views[b.count], PyBUF_C_CONTIGUOUS) == 0) {
        Py_buffer *v = &b.views[b.count++];
        if (v->len == 2 * n * 8) st = v->buf;
        else PyErr_SetString(PyExc_ValueError, "state: wrong size");
    }
    double *mo = st ? take(&b, o[2], 1, 8, 'd', 2, shape_m, "metrics") : NULL;
    if (!mo) {
        release(&b);
        return NULL;
    }
    Py_BEGIN_ALLOW_THREADS
    for (Py_ssize_t i = 0; i < n; i++) {
        const double *t = an + i;
        uint64_t bits = st[i], folds = st[n + i];
        double skew = 0.0;
        for (int p = 0; p < 3; p++) {
            double v = fabs(90.0 - t[(HT_SKEW + p) * n] * degrees);
            skew = p ? np_max(skew, v) : v;
        }
        double warp = 0.0;
        for (int fc = 0; fc < 6; fc++) {
            double f0 = t[(HT_FOLD + 2 * fc) * n] * degrees;
            double f1 = t[(HT_FOLD + 2 * fc + 1) * n] * degrees;
            int c0 = (folds >> (2 * fc)) & 1, c1 = (folds >> (2 * fc + 1)) & 1;
            double fw = (c0 || c1) ? np_max(c0 ? f0 : 0.0, c1 ? f1 : 0.0) : np_max(f0, f1);
            warp = fc ? np_max(warp, fw) : fw;
        }
        double lo = 0.0, hi = 0.0;
        for (int k = 0; k < 24; k++) {
            double u = t[(HT_CORNER + k) * n] * degrees;
            double a = ((bits >> k) & 1) ? 360.0 - u : u;
            if ((bits >> (24 + k)) & 1) a = u;
            lo = k ? np_min(lo, a) : a;
            hi = k ? np_max(hi, a) : a;
        }
        double dlo = 0.0, dhi = 0.0;
        for (int ed = 0; ed < 12; ed++) {
            double d = 180.0 - t[(HT_DIHEDRAL + ed) * n] * degrees;
            dlo = ed ? np_min(dlo, d) : d;
            dhi = ed ? np_max(dhi, d) : d;
        }
        double *m = mo + i;
        m[H_SKEW * n] = skew + 0.0;
        m[H_WARP * n] = warp + 0.0;
        m[H_MIN_ANGLE * n] = lo + 0.0;
        m[H_MAX_ANGLE * n] = hi + 0.0;
        m[H_MIN_DIHEDRAL * n] = dlo + 0.0;
        m[H_MAX_DIHEDRAL * n] = dhi + 0.0;
    }
    Py_END_ALLOW_THREADS
    release(&b);
    Py_RETURN_NONE;
}

/* The finish of one element from its arc tangents ``t`` (stride n), in degrees. */
static void quad_finish(const double *t, Py_ssize_t n, unsigned char state, int flat,
                        double degrees, double *m, unsigned char *f)
{
    double lo, hi;
    m[M_SKEW * n] = fabs(90.0 - t[T_SKEW * n] * degrees);
    if (state & S_CORNERS) {
        lo = hi = 0.0;
        for (int i = 0; i < 4; i++) {
            double ang = t[(T_CORNER + i) * n] * degrees;
            ang = ang < 0.0 ? ang + 360.0 : ang + 0.0;
            lo = i ? np_min(lo, ang) : ang;
            hi = i ? np_max(hi, ang) : ang;
        }
    } else {
        lo = t[T_LOW * n] * degrees;
        hi = t[T_HIGH * n] * degrees;
    }
    m[M_MIN_ANGLE * n] = lo;
    m[M_MAX_ANGLE * n] = hi;
    f[F_NONCONVEX * n] = (hi > 180.0) && !f[F_SELF_INTERSECTING * n] && !f[F_DEGENERATE * n];
    if (!flat)
        m[M_WARP * n] = larger_counted(t[T_WARP * n] * degrees, (state & S_WARP_COUNTS_1) != 0,
                                       t[(T_WARP + 1) * n] * degrees,
                                       (state & S_WARP_COUNTS_2) != 0);
}

PyDoc_STRVAR(quad_doc,
"quad(space, plane, metrics, flags, tangents, state, gauss, degrees, tolerance)\n"
"    -> (flat, corners)\n\n"
"First part of the pass over n four-node quads: ``space`` (n, 4, 3) and ``plane``\n"
"(n, 4, 2) C-contiguous float64 nodes; writes ``metrics`` (13, n) float64 and ``flags``\n"
"(5, n) bool in the order meshaudit.metrics.fused names them, but for those that need\n"
"an arc tangent, whose arguments go to ``tangents`` (2, 9, n) float64 (y, then x) and\n"
"``state`` (n,) uint8. Returns whether the elements lie in a plane z = c (then rows 7\n"
"and 8 of ``tangents`` are unused) and whether any needs its four corner angles (else\n"
"rows 3 to 6 are unused). Then quad_angles() from numpy.arctan2 of the rows used.");

static PyObject *quad(PyObject *self, PyObject *args)
{
    PyObject *o[6];
    constants k;
    buffers b = {.count = 0};
    (void)self;
    if (!PyArg_ParseTuple(args, "OOOOOOddd", &o[0], &o[1], &o[2], &o[3], &o[4], &o[5], &k.g,
                          &k.degrees, &k.tol))
        return NULL;
    Py_ssize_t shape_space[3] = {-1, 4, 3};
    const double *sp = take(&b, o[0], 0, 8, 'd', 3, shape_space, "space");
    if (!sp) return NULL;
    Py_ssize_t n = b.views[0].shape[0];
    Py_ssize_t shape_plane[3] = {n, 4, 2}, shape_m[2] = {N_METRICS, n};
    Py_ssize_t shape_f[2] = {N_FLAGS, n}, shape_t[3] = {2, N_TANGENTS, n}, shape_s[1] = {n};
    const double *pl = take(&b, o[1], 0, 8, 'd', 3, shape_plane, "plane");
    double *mo = pl ? take(&b, o[2], 1, 8, 'd', 2, shape_m, "metrics") : NULL;
    unsigned char *fo = mo ? take(&b, o[3], 1, 1, 'b', 2, shape_f, "flags") : NULL;
    double *to = fo ? take(&b, o[4], 1, 8, 'd', 3, shape_t, "tangents") : NULL;
    unsigned char *so = to ? take(&b, o[5], 1, 1, 'b', 1, shape_s, "state") : NULL;
    if (!so) {
        release(&b);
        return NULL;
    }
    int flat, corners = 0;
    Py_BEGIN_ALLOW_THREADS
    flat = flat_in_z(sp, n);
    double m[N_METRICS];
    unsigned char f[N_FLAGS];
    double *ys = to, *xs = to + N_TANGENTS * n;
    for (Py_ssize_t i = 0; i < n; i++) {
        unsigned char st = quad_one(pl + 8 * i, sp + 12 * i, flat, &k, m, f, ys + i, xs + i, n);
        so[i] = st;
        corners |= st & S_CORNERS;
        for (int j = 0; j < N_METRICS; j++) mo[j * n + i] = m[j];
        for (int j = 0; j < N_FLAGS; j++) fo[j * n + i] = f[j];
    }
    Py_END_ALLOW_THREADS
    release(&b);
    return Py_BuildValue("(OO)", flat ? Py_True : Py_False, corners ? Py_True : Py_False);
}

PyDoc_STRVAR(quad_angles_doc,
"quad_angles(angles, state, metrics, flags, flat, degrees)\n\n"
"Second part of the pass: ``angles`` (9, n) float64, numpy.arctan2 of the rows of\n"
"``tangents`` quad() filled (radians); finishes skew, min_angle, max_angle, the warp\n"
"(unless ``flat``) and the nonconvex flag in ``metrics`` and ``flags``.");

static PyObject *quad_angles(PyObject *self, PyObject *args)
{
    PyObject *o[4];
    int flat;
    double degrees;
    buffers b = {.count = 0};
    (void)self;
    if (!PyArg_ParseTuple(args, "OOOOpd", &o[0], &o[1], &o[2], &o[3], &flat, &degrees))
        return NULL;
    Py_ssize_t shape_a[2] = {N_TANGENTS, -1};
    const double *an = take(&b, o[0], 0, 8, 'd', 2, shape_a, "angles");
    if (!an) return NULL;
    Py_ssize_t n = b.views[0].shape[1];
    Py_ssize_t shape_s[1] = {n}, shape_m[2] = {N_METRICS, n}, shape_f[2] = {N_FLAGS, n};
    const unsigned char *st = take(&b, o[1], 0, 1, 'b', 1, shape_s, "state");
    double *mo = st ? take(&b, o[2], 1, 8, 'd', 2, shape_m, "metrics") : NULL;
    unsigned char *fo = mo ? take(&b, o[3], 1, 1, 'b', 2, shape_f, "flags") : NULL;
    if (!fo) {
        release(&b);
        return NULL;
    }
    Py_BEGIN_ALLOW_THREADS
    for (Py_ssize_t i = 0; i < n; i++) quad_finish(an + i, n, st[i], flat, degrees, mo + i, fo + i);
    Py_END_ALLOW_THREADS
    release(&b);
    Py_RETURN_NONE;
}

static PyMethodDef methods[] = {
    {"quad", quad, METH_VARARGS, quad_doc},
    {"quad_angles", quad_angles, METH_VARARGS, quad_angles_doc},
    {"hexahedron", hexahedron, METH_VARARGS, hexahedron_doc},
    {"hexahedron_angles", hexahedron_angles, METH_VARARGS, hexahedron_angles_doc},
    {NULL, NULL, 0, NULL},
};

static struct PyModuleDef module = {
    PyModuleDef_HEAD_INIT, "_fused",
    "Compiled single-pass element kernels (see meshaudit.metrics.fused).", -1, methods,
};

PyMODINIT_FUNC PyInit__fused(void) { return PyModule_Create(&module); }
