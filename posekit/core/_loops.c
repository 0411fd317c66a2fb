/*
 * Compiled loops for large batches of rotations: posekit.core._loops.
 *
 * Optional: posekit/core/compiled.py uses these when the module was built and falls back
 * to the numpy kernels of rotation.py, checks.py and ops.py otherwise.  Each loop runs the
 * numpy kernel's formulas in the numpy kernel's order of operations (the same products,
 * the same sums in the same order, the same selects), so on exact inputs (entries 0, -0,
 * +-1, +-1/2 ...) the two routes give the same bits, signs of zero included, and elsewhere
 * they differ only where the library functions round differently.  Each loop also counts
 * the rows that fail the input check it fuses (orthonormality and determinant of matrices,
 * length of quaternions; NaN fails every check), so the caller reads the data once and
 * raises posekit's typed error, with its full message, only when the count is not zero.
 *
 * Sines, cosines, arctangents and square roots are the C library's (sin, cos, atan2, sqrt
 * of <math.h>; C99 Annex F / IEEE 754 for signed zeros, infinities and NaN; sqrt is
 * correctly rounded; frexp and ldexp for the rare quaternions too long or too short to
 * square).  The loops that call them work in passes over a tile: the arithmetic before the
 * calls, the calls, the arithmetic after them, so the compiler can vectorise the arithmetic
 * passes (the calls themselves run one value at a time).  No series of our own.
 *
 * Formulas and their sources are the ones beside the numpy kernels:
 *   quaternion -> matrix: Shuster, J. Astronautical Sciences 41(4), 1993 (Hamilton, active);
 *   matrix -> quaternion: Shepperd, J. Guidance and Control 1(3), 1978 (largest diagonal);
 *   quaternion -> Euler: Bernardes & Viollet, PLoS ONE 17(11), 2022.
 *
 * Portable C99 with the Python C API's buffer protocol only (no numpy headers, no compiler
 * extensions required, no instruction-set specific code): building needs a C compiler and
 * Python's headers, nothing else.  setup.py adds optimisation flags only where the compiler
 * accepts them, and asks for no contraction of a * b + c into one fused multiply-add (the
 * numpy kernels round the product and the sum apart).  The GIL is released inside every loop.
 */
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <float.h>
#include <math.h>
#include <string.h>

/* a * b + c rounded twice, as numpy does (the C99 pragma, 7.12.2; MSVC's own pragma, from memory;
 * gcc ignores both and gets -ffp-contract=off from setup.py instead) */
#if defined(__clang__)
#pragma STDC FP_CONTRACT OFF
#elif defined(_MSC_VER)
#pragma fp_contract(off)
#endif

#if defined(_MSC_VER) && !defined(__clang__)
#define restrict __restrict
#define ALWAYS_INLINE static __forceinline
#elif defined(__GNUC__)
#define ALWAYS_INLINE static inline __attribute__((always_inline))
#else
#define ALWAYS_INLINE static inline
#endif

#define PI 3.14159265358979323846264338327950288 /* the double nearest pi, as numpy.pi */
#define POLE_SNAP 1e-14                          /* the same as rotation.POLE_SNAP */
/* Quaternion rows whose squared length lies outside [NORM2_LOW, NORM2_HIGH] are rescaled by a
 * power of two before the matrix is formed (rotation.NORM2_RANGE; the numpy kernel does the same). */
#define NORM2_LOW 1e-300
#define NORM2_HIGH 1e300

/* numpy.maximum and numpy.minimum as the numpy kernels use them: NaN in either operand is the result
 * (numpy's documentation of both) */
#define NP_MAX(a, b) ((a) != (a) ? (a) : ((a) > (b) ? (a) : (b)))
#define NP_MIN(a, b) ((a) != (a) ? (a) : ((a) < (b) ? (a) : (b)))

/* Rows are processed in tiles: a tile is copied into entry-major local arrays (one array
 * per entry, in the order the arithmetic wants them), the arithmetic runs over the tile
 * with contiguous operands and only selects (?:) inside, so the compiler can vectorise it,
 * and the results are copied back into rows.  A short last tile is padded with the
 * identity (which passes every check) and not written back.  Rows failing a check are
 * marked 1.0 in a per-tile array and counted after the arithmetic (a count kept inside
 * the arithmetic loop would stop gcc from vectorising it for the x86-64 baseline). */
#define TILE 64

/* dst[e][t] = src row t entry col[e] (col NULL: entry e), e < width; padded rows get pad[e] */
ALWAYS_INLINE void
load_tile(const double *restrict src, int width, Py_ssize_t nt, double *restrict dst, const double *pad,
          const int *col)
{
    for (Py_ssize_t t = 0; t < TILE; t++)
        for (int e = 0; e < width; e++)
            dst[e * TILE + t] = t < nt ? src[width * t + (col ? col[e] : e)] : pad[e];
}

/* dst row t entry col[e] (col NULL: entry e) = src[e][t], for the nt rows of the tile */
ALWAYS_INLINE void
store_tile(double *restrict dst, int width, Py_ssize_t nt, const double *restrict src, const int *col)
{
    for (Py_ssize_t t = 0; t < nt; t++)
        for (int e = 0; e < width; e++)
            dst[width * t + (col ? col[e] : e)] = src[e * TILE + t];
}

ALWAYS_INLINE Py_ssize_t
count_marked(const double *flag)
{
    Py_ssize_t k = 0;
    for (Py_ssize_t t = 0; t < TILE; t++)
        k += flag[t] != 0.0;
    return k;
}

static const double EYE[9] = {1, 0, 0, 0, 1, 0, 0, 0, 1};
static const double UNIT_Q[4] = {1, 0, 0, 0};
static const double ZEROS[4] = {0, 0, 0, 0};
/* the entries of a quaternion row in the order w, x, y, z: scalar first, or scalar last */
static const int SCALAR_FIRST[4] = {0, 1, 2, 3};
static const int SCALAR_LAST[4] = {3, 0, 1, 2};

#define TILE_ROWS(n, r0) ((n) - (r0) < TILE ? (n) - (r0) : TILE)
/* entry e of row t of an entry-major tile */
#define AT(a, e) (a)[(e) * TILE + t]

/* |M^T M - I|_F squared and det M (cofactor expansion) of tile row t, as checks.py. */
#define GRAM_DET(a, err, det)                                                                     \
    do {                                                                                          \
        double m00 = AT(a, 0), m01 = AT(a, 1), m02 = AT(a, 2), m10 = AT(a, 3), m11 = AT(a, 4);  \
        double m12 = AT(a, 5), m20 = AT(a, 6), m21 = AT(a, 7), m22 = AT(a, 8);                  \
        double g00 = m00 * m00 + m10 * m10 + m20 * m20 - 1.0;                                     \
        double g11 = m01 * m01 + m11 * m11 + m21 * m21 - 1.0;                                     \
        double g22 = m02 * m02 + m12 * m12 + m22 * m22 - 1.0;                                     \
        double g01 = m00 * m01 + m10 * m11 + m20 * m21;                                           \
        double g02 = m00 * m02 + m10 * m12 + m20 * m22;                                           \
        double g12 = m01 * m02 + m11 * m12 + m21 * m22;                                           \
        err = g00 * g00 + g11 * g11 + g22 * g22 + 2.0 * (g01 * g01 + g02 * g02 + g12 * g12);     \
        det = m00 * (m11 * m22 - m12 * m21) - m01 * (m10 * m22 - m12 * m20)                       \
            + m02 * (m10 * m21 - m11 * m20);                                                      \
    } while (0)

/* 1.0 when a row fails: the error (squared here) is not within tolerance or the determinant is
 * not >= 0 (NaN fails both, so nothing unreadable passes); else 0.0 */
#define BAD_MATRIX(err2, det, tol) ((!((err2) <= (tol) * (tol)) || !((det) >= 0.0)) ? 1.0 : 0.0)

/* ---------------------------------------------------------------------------------- */
/* the loops                                                                           */

static Py_ssize_t
check_loop(const double *restrict m, Py_ssize_t n, double tol)
{
    Py_ssize_t bad = 0;
    double a[9 * TILE], flag[TILE];
    for (Py_ssize_t r0 = 0; r0 < n; r0 += TILE) {
        load_tile(m + 9 * r0, 9, TILE_ROWS(n, r0), a, EYE, NULL);
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double err, det;
            GRAM_DET(a, err, det);
            flag[t] = BAD_MATRIX(err, det, tol);
        }
        bad += count_marked(flag);
    }
    return bad;
}

/* Active matrix of quaternion components into tile row t of `o`: every product scaled by
 * `s` (2 / |q|^2 divides a length out; 2 for unit quaternions, where x * 2 is numpy's x + x
 * to the bit).  `tr` writes the transpose, which is the matrix of the conjugate to the bit. */
#define MATRIX_OF_PARTS(o, w, x, y, z, s, tr)                                                      \
    do {                                                                                          \
        double x2 = x * s, y2 = y * s, z2 = z * s;                                                \
        double xx = x * x2, yy = y * y2, zz = z * z2;                                             \
        double xy = x * y2, xz = x * z2, yz = y * z2;                                             \
        double wx = w * x2, wy = w * y2, wz = w * z2;                                             \
        double o01 = xy - wz, o10 = xy + wz, o02 = xz + wy, o20 = xz - wy, o12 = yz - wx, o21 = yz + wx; \
        AT(o, 0) = 1.0 - (yy + zz);                                                               \
        AT(o, 1) = tr ? o10 : o01;                                                                \
        AT(o, 2) = tr ? o20 : o02;                                                                \
        AT(o, 3) = tr ? o01 : o10;                                                                \
        AT(o, 4) = 1.0 - (xx + zz);                                                               \
        AT(o, 5) = tr ? o21 : o12;                                                                \
        AT(o, 6) = tr ? o02 : o20;                                                                \
        AT(o, 7) = tr ? o12 : o21;                                                                \
        AT(o, 8) = 1.0 - (xx + yy);                                                               \
    } while (0)

/* Hamilton quaternion rows -> active matrix rows, the length divided out in the same pass
 * (homogeneous form).  `last`: scalar in slot 3; `conj`: use the conjugate (the transposed
 * matrix).  Counts rows whose length is off 1 by more than `tol` (`*bad_unit`) and rows
 * shorter than 1e-12 (`*bad_zero`).
 *
 * A row whose squared length is outside [NORM2_LOW, NORM2_HIGH] (components beyond about
 * 1e150 overflow it, all below about 1e-150 underflow it; NaN) is redone after the tile's
 * vectorised pass: multiplied by 2^-e, e the binary exponent of its largest |component|
 * (frexp; left as it is when that is 0, infinite or NaN), its length that of the scaled row
 * times 2^e (ldexp).  A power of two scales exactly (IEEE 754), so the matrix is the one of
 * the row itself: (1e300, 0, 0, 1e300) gives the turn of (1, 0, 0, 1) / sqrt 2.  The numpy
 * kernel (rotation._write_matrix_of_parts) does the same, to the bit. */
static void
quaternion_matrix_loop(const double *restrict q, double *restrict out, Py_ssize_t n, int last, int conj,
                       double tol, Py_ssize_t *bad_unit, Py_ssize_t *bad_zero)
{
    const int *col = last ? SCALAR_LAST : SCALAR_FIRST;
    Py_ssize_t bu = 0, bz = 0;
    double a[4 * TILE], o[9 * TILE], off[TILE], zero[TILE], odd[TILE];
    for (Py_ssize_t r0 = 0; r0 < n; r0 += TILE) {
        Py_ssize_t nt = TILE_ROWS(n, r0);
        load_tile(q + 4 * r0, 4, nt, a, UNIT_Q, col);
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double w = AT(a, 0), x = AT(a, 1), y = AT(a, 2), z = AT(a, 3);
            double nn = w * w + x * x + y * y + z * z;
            double len = sqrt(nn);
            int plain = nn >= NORM2_LOW && nn <= NORM2_HIGH;
            off[t] = plain && !(fabs(len - 1.0) <= tol) ? 1.0 : 0.0;
            zero[t] = plain && !(len >= 1e-12) ? 1.0 : 0.0;
            odd[t] = plain ? 0.0 : 1.0;
            double s = 2.0 / nn;
            MATRIX_OF_PARTS(o, w, x, y, z, s, conj);
        }
        bu += count_marked(off);
        bz += count_marked(zero);
        if (count_marked(odd))
            for (Py_ssize_t t = 0; t < nt; t++) {
                if (odd[t] == 0.0)
                    continue;
                double w = AT(a, 0), x = AT(a, 1), y = AT(a, 2), z = AT(a, 3);
                double top = NP_MAX(NP_MAX(NP_MAX(fabs(w), fabs(x)), fabs(y)), fabs(z));
                int e = 0;
                if (top > 0.0 && top <= DBL_MAX) {
                    frexp(top, &e);
                    w = ldexp(w, -e);
                    x = ldexp(x, -e);
                    y = ldexp(y, -e);
                    z = ldexp(z, -e);
                }
                double nn = w * w + x * x + y * y + z * z;
                double len = ldexp(sqrt(nn), e); /* inf when the true length exceeds the double range */
                bu += !(fabs(len - 1.0) <= tol);
                bz += !(len >= 1e-12);
                double s = 2.0 / nn;
                MATRIX_OF_PARTS(o, w, x, y, z, s, conj);
            }
        store_tile(out + 9 * r0, 9, nt, o, NULL);
    }
    *bad_unit = bu;
    *bad_zero = bz;
}

/* Shepperd's quaternion (w >= 0) of tile row t, as rotation._quaternion_of_matrix_block:
 * every candidate column is computed and the largest diagonal picks one by selects: a later
 * column wins only when its diagonal is larger than every earlier one, which is numpy's
 * "d > maximum(earlier)" exactly, NaN included (a comparison with NaN is false, and
 * numpy.maximum propagates NaN); then the column is divided by its length, negated where w < 0. */
#define SHEPPERD(a, w, x, y, z)                                                            \
    do {                                                                                   \
        double m00 = AT(a, 0), m01 = AT(a, 1), m02 = AT(a, 2), m10 = AT(a, 3);             \
        double m11 = AT(a, 4), m12 = AT(a, 5), m20 = AT(a, 6), m21 = AT(a, 7), m22 = AT(a, 8); \
        double trace = m00 + m11 + m22, lo = 1.0 - trace;                                  \
        double d0 = 1.0 + trace, d1 = lo + 2.0 * m00, d2 = lo + 2.0 * m11, d3 = lo + 2.0 * m22; \
        double vx = m21 - m12, vy = m02 - m20, vz = m10 - m01;                             \
        double sxy = m01 + m10, sxz = m02 + m20, syz = m12 + m21;                          \
        w = d1 > d0 ? vx : d0;                                                             \
        x = d1 > d0 ? d1 : vx;                                                             \
        y = d1 > d0 ? sxy : vy;                                                            \
        z = d1 > d0 ? sxz : vz;                                                            \
        w = d2 > d0 && d2 > d1 ? vy : w;                                                   \
        x = d2 > d0 && d2 > d1 ? sxy : x;                                                  \
        y = d2 > d0 && d2 > d1 ? d2 : y;                                                   \
        z = d2 > d0 && d2 > d1 ? syz : z;                                                  \
        w = d3 > d0 && d3 > d1 && d3 > d2 ? vz : w;                                        \
        x = d3 > d0 && d3 > d1 && d3 > d2 ? sxz : x;                                       \
        y = d3 > d0 && d3 > d1 && d3 > d2 ? syz : y;                                       \
        z = d3 > d0 && d3 > d1 && d3 > d2 ? d3 : z;                                        \
        double inv = 1.0 / sqrt(w * w + x * x + y * y + z * z);                            \
        inv = w < 0.0 ? -inv : inv;                                                        \
        w *= inv;                                                                          \
        x *= inv;                                                                          \
        y *= inv;                                                                          \
        z *= inv;                                                                          \
    } while (0)

/* Matrix rows -> unit quaternion rows (w >= 0); `conj` writes the conjugate (negated vector
 * part, as rotation.conjugate after quaternion_of_matrix), `last` puts the scalar in slot 3. */
static Py_ssize_t
matrix_quaternion_loop(const double *restrict m, double *restrict out, Py_ssize_t n, int conj, int last,
                       double tol)
{
    Py_ssize_t bad = 0;
    double a[9 * TILE], o[4 * TILE], flag[TILE];
    for (Py_ssize_t r0 = 0; r0 < n; r0 += TILE) {
        Py_ssize_t nt = TILE_ROWS(n, r0);
        load_tile(m + 9 * r0, 9, nt, a, EYE, NULL);
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double err, det, w, x, y, z;
            GRAM_DET(a, err, det);
            flag[t] = BAD_MATRIX(err, det, tol);
            SHEPPERD(a, w, x, y, z);
            AT(o, 0) = w;
            AT(o, 1) = conj ? -x : x;
            AT(o, 2) = conj ? -y : y;
            AT(o, 3) = conj ? -z : z;
        }
        bad += count_marked(flag);
        store_tile(out + 4 * r0, 4, nt, o, last ? SCALAR_LAST : SCALAR_FIRST);
    }
    return bad;
}

/* Euler angles (radians) -> matrix rows: the elementary quaternions (cos, sin of half of
 * each angle, libm) multiplied in the sequence's order (intrinsic e1 e2 e3, extrinsic
 * e3 e2 e1), then turned into the matrix; `tr` writes the transpose.
 *
 * The product is the numpy kernel's (rotation._euler_parts), which skips the structural
 * zeros of the elementary quaternions: with f, b, l the first, middle and last factor
 * (axes af, ab, al; adjacent axes differ), p = f b has the four single products
 *   pw = cf cb,  p[af] = sf cb,  p[ab] = cf sb,  p[third] = +-sf sb (+ when ab follows af cyclically),
 * and q = p l has two products per component; with a1 = al + 1, a2 = al + 2 (mod 3):
 *   qw = pw cl - p[al] sl,  q[al] = pw sl + p[al] cl,  q[a1] = p[a1] cl + p[a2] sl,  q[a2] = p[a2] cl - p[a1] sl.
 * A sum of two products is the same in either order (IEEE 754 addition commutes), so these
 * are numpy's numbers to the bit given the same sines and cosines; adding a product with a
 * structural zero (as x * 0) instead would turn a -0 into +0.  The axes pick tile columns
 * through pointers set once per call, so the loops hold no selects on the axes. */
static void
euler_matrix_loop(const double *restrict ang, double *restrict out, Py_ssize_t n, int ax0, int ax1, int ax2,
                  int intrinsic, int tr)
{
    static const int FBL_INTRINSIC[3] = {0, 1, 2}, FBL_EXTRINSIC[3] = {2, 1, 0}; /* angle columns of f, b, l */
    const int af = intrinsic ? ax0 : ax2, ab = ax1, al = intrinsic ? ax2 : ax0;
    const int cyclic = ab == (af + 1) % 3;
    double a[3 * TILE], c[3 * TILE], s[3 * TILE], p[4 * TILE], q[4 * TILE], o[9 * TILE];
    double *pf = p + (1 + af) * TILE, *pb = p + (1 + ab) * TILE, *pt = p + (4 - af - ab) * TILE;
    const double *pl = p + (1 + al) * TILE, *pa1 = p + (1 + (al + 1) % 3) * TILE, *pa2 = p + (1 + (al + 2) % 3) * TILE;
    double *ql = q + (1 + al) * TILE, *qa1 = q + (1 + (al + 1) % 3) * TILE, *qa2 = q + (1 + (al + 2) % 3) * TILE;
    for (Py_ssize_t r0 = 0; r0 < n; r0 += TILE) {
        Py_ssize_t nt = TILE_ROWS(n, r0);
        load_tile(ang + 3 * r0, 3, nt, a, ZEROS, intrinsic ? FBL_INTRINSIC : FBL_EXTRINSIC);
        for (int k = 0; k < 3 * TILE; k++) {
            double h = 0.5 * a[k];
            s[k] = sin(h);
            c[k] = cos(h);
        }
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double cf = AT(c, 0), sf = AT(s, 0), cb = AT(c, 1), sb = AT(s, 1), ps = sf * sb;
            p[t] = cf * cb;
            pf[t] = sf * cb;
            pb[t] = cf * sb;
            pt[t] = cyclic ? ps : -ps;
        }
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double cl = AT(c, 2), sl = AT(s, 2), pw = p[t];
            q[t] = pw * cl - pl[t] * sl;
            ql[t] = pw * sl + pl[t] * cl;
            qa1[t] = pa1[t] * cl + pa2[t] * sl;
            qa2[t] = pa2[t] * cl - pa1[t] * sl;
        }
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double w = AT(q, 0), x = AT(q, 1), y = AT(q, 2), z = AT(q, 3);
            MATRIX_OF_PARTS(o, w, x, y, z, 2.0, tr);
        }
        store_tile(out + 9 * r0, 9, nt, o, NULL);
    }
}

/* Matrix rows -> Euler angles (Bernardes & Viollet 2022), as rotation.euler_of_quaternion of
 * rotation.quaternion_of_matrix (conjugated first when `conj`), in four passes per tile:
 * (1) the matrix check and Shepperd's quaternion; (2) the method's four numbers a, b, c, d
 * for axes (i, j, k) as it reads the sequence (reversed for intrinsic; k the missing axis of
 * a proper sequence; eps the permutation's sign) and the lengths |(a, b)|, |(c, d)|;
 * (3) three atan2 (libm); (4) the pole snap (the third listed angle is 0 at a pole, as
 * euler_of_quaternion documents), the wrap of the outer angles to (-pi, pi], the angles
 * times `scale` in the user's order into `out` (n, 3) and, unless NULL, the pole distance
 * into `dist` (n). */
static Py_ssize_t
euler_of_matrix_loop(const double *restrict m, double *restrict out, double *restrict dist, Py_ssize_t n,
                     int i, int j, int k, int proper, double eps, int intrinsic, int conj, double tol, double scale)
{
    Py_ssize_t bad = 0;
    /* q: w, x, y, z;  u: |(a, b)|, |(c, d)|, a, b, c, d;  v: atan2(b, a), atan2(d, c), atan2(|(c, d)|, |(a, b)|) */
    double a[9 * TILE], q[4 * TILE], u[6 * TILE], v[3 * TILE], o[4 * TILE], flag[TILE];
    const double *qi = q + (1 + i) * TILE, *qj = q + (1 + j) * TILE, *qk = q + (1 + k) * TILE;
    for (Py_ssize_t r0 = 0; r0 < n; r0 += TILE) {
        Py_ssize_t nt = TILE_ROWS(n, r0);
        load_tile(m + 9 * r0, 9, nt, a, EYE, NULL);
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double err, det, w, x, y, z;
            GRAM_DET(a, err, det);
            flag[t] = BAD_MATRIX(err, det, tol);
            SHEPPERD(a, w, x, y, z);
            AT(q, 0) = w;
            AT(q, 1) = conj ? -x : x;
            AT(q, 2) = conj ? -y : y;
            AT(q, 3) = conj ? -z : z;
        }
        bad += count_marked(flag);
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double w = AT(q, 0), ke = qk[t] * eps;
            double va = proper ? w : w - qj[t];
            double vb = proper ? qi[t] : qi[t] + ke;
            double vc = proper ? qj[t] : qj[t] + w;
            double vd = proper ? ke : ke - qi[t];
            AT(u, 0) = sqrt(va * va + vb * vb); /* |entries| <= 2: no overflow, as the numpy kernel */
            AT(u, 1) = sqrt(vc * vc + vd * vd);
            AT(u, 2) = va;
            AT(u, 3) = vb;
            AT(u, 4) = vc;
            AT(u, 5) = vd;
        }
        for (Py_ssize_t t = 0; t < TILE; t++) {
            AT(v, 0) = atan2(AT(u, 3), AT(u, 2));
            AT(v, 1) = atan2(AT(u, 5), AT(u, 4));
            AT(v, 2) = atan2(AT(u, 1), AT(u, 0));
        }
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double sp = AT(u, 0), sm = AT(u, 1), tp = AT(v, 0), tm = AT(v, 1), t2 = 2.0 * AT(v, 2);
            double t1 = tp - tm, t3 = tp + tm;
            int at_zero = sm <= POLE_SNAP, at_pi = sp <= POLE_SNAP, pole = at_zero || at_pi;
            /* at a pole the whole sum or difference goes to the angle third in the user's listing */
            double t3i = at_zero ? 2.0 * tp : (at_pi ? 2.0 * tm : t3), t1i = pole ? 0.0 : t1;
            double t1e = at_zero ? 2.0 * tp : (at_pi ? -2.0 * tm : t1), t3e = pole ? 0.0 : t3;
            t1 = intrinsic ? t1i : t1e;
            t3 = intrinsic ? t3i : t3e;
            double tb2 = t2 - 0.5 * PI, d_proper = NP_MIN(t2, PI - t2), d_tait = 0.5 * PI - fabs(tb2);
            double d = proper ? d_proper : d_tait;
            t3 = proper ? t3 : eps * t3;
            t2 = proper ? t2 : tb2;
            double w1 = t1 > PI ? t1 - 2.0 * PI : t1, w3 = t3 > PI ? t3 - 2.0 * PI : t3;
            w1 = w1 <= -PI ? w1 + 2.0 * PI : w1;
            w3 = w3 <= -PI ? w3 + 2.0 * PI : w3;
            AT(o, 0) = (intrinsic ? w3 : w1) * scale; /* the user's first angle */
            AT(o, 1) = t2 * scale;
            AT(o, 2) = (intrinsic ? w1 : w3) * scale;
            AT(o, 3) = NP_MAX(d, 0.0);
        }
        store_tile(out + 3 * r0, 3, nt, o, NULL);
        if (dist != NULL)
            memcpy(dist + r0, o + 3 * TILE, (size_t)nt * sizeof(double));
    }
    return bad;
}

/* Matrix products a b, each entry summed from +0 as numpy's matmul does (its accumulator starts
 * at 0.0), so an entry whose three products are all -0 is +0 on both routes. */
static Py_ssize_t
compose_loop(const double *restrict a, const double *restrict b, double *restrict out, Py_ssize_t n, double tol)
{
    Py_ssize_t bad = 0;
    double p[9 * TILE], q[9 * TILE], o[9 * TILE], flag[TILE];
    for (Py_ssize_t r0 = 0; r0 < n; r0 += TILE) {
        Py_ssize_t nt = TILE_ROWS(n, r0);
        load_tile(a + 9 * r0, 9, nt, p, EYE, NULL);
        load_tile(b + 9 * r0, 9, nt, q, EYE, NULL);
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double e1, d1, e2, d2;
            GRAM_DET(p, e1, d1);
            GRAM_DET(q, e2, d2);
            flag[t] = BAD_MATRIX(e1, d1, tol) + BAD_MATRIX(e2, d2, tol);
            for (int i = 0; i < 3; i++)
                for (int j = 0; j < 3; j++)
                    AT(o, 3 * i + j) = 0.0 + AT(p, 3 * i) * AT(q, j) + AT(p, 3 * i + 1) * AT(q, 3 + j)
                                     + AT(p, 3 * i + 2) * AT(q, 6 + j);
        }
        bad += count_marked(flag);
        store_tile(out + 9 * r0, 9, nt, o, NULL);
    }
    return bad;
}

/* Matrix times vector rows, as ops._check_and_turn_block: m00 x + m01 y + m02 z, ... */
static Py_ssize_t
turn_loop(const double *restrict m, const double *restrict v, double *restrict out, Py_ssize_t n, double tol)
{
    Py_ssize_t bad = 0;
    double a[9 * TILE], u[3 * TILE], o[3 * TILE], flag[TILE];
    for (Py_ssize_t r0 = 0; r0 < n; r0 += TILE) {
        Py_ssize_t nt = TILE_ROWS(n, r0);
        load_tile(m + 9 * r0, 9, nt, a, EYE, NULL);
        load_tile(v + 3 * r0, 3, nt, u, ZEROS, NULL);
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double err, det;
            GRAM_DET(a, err, det);
            flag[t] = BAD_MATRIX(err, det, tol);
            AT(o, 0) = AT(a, 0) * AT(u, 0) + AT(a, 1) * AT(u, 1) + AT(a, 2) * AT(u, 2);
            AT(o, 1) = AT(a, 3) * AT(u, 0) + AT(a, 4) * AT(u, 1) + AT(a, 5) * AT(u, 2);
            AT(o, 2) = AT(a, 6) * AT(u, 0) + AT(a, 7) * AT(u, 1) + AT(a, 8) * AT(u, 2);
        }
        bad += count_marked(flag);
        store_tile(out + 3 * r0, 3, nt, o, NULL);
    }
    return bad;
}

/* ---------------------------------------------------------------------------------- */
/* Python entry points: buffers are C-contiguous float64, sizes checked here.          */

static int
rows_of(Py_buffer *b, Py_ssize_t width, Py_ssize_t *n, const char *what)
{
    if (b->itemsize != 8 || b->len % (8 * width) != 0) {
        PyErr_Format(PyExc_ValueError, "%s: expected float64 rows of %zd numbers", what, width);
        return -1;
    }
    *n = b->len / (8 * width);
    return 0;
}

static int
same_rows(Py_ssize_t n, Py_ssize_t m, const char *what)
{
    if (n != m) {
        PyErr_Format(PyExc_ValueError, "%s: row counts differ (%zd and %zd)", what, n, m);
        return -1;
    }
    return 0;
}

/* Every entry point parses its buffers into b[], checks their row counts, runs its loop
 * without the GIL and releases every buffer on the way out (result NULL on error). */
static void
release(Py_buffer *b, int k)
{
    for (int i = 0; i < k; i++)
        if (b[i].obj != NULL)
            PyBuffer_Release(&b[i]);
}

/* rows of b[0] with width w0; each further buffer b[i] must hold the same rows of width w[i] */
static int
rows_all(Py_buffer *b, const Py_ssize_t *w, int k, Py_ssize_t *n)
{
    if (rows_of(&b[0], w[0], n, "input") < 0)
        return -1;
    for (int i = 1; i < k; i++) {
        Py_ssize_t m;
        if (rows_of(&b[i], w[i], &m, "output") < 0 || same_rows(*n, m, "buffers") < 0)
            return -1;
    }
    return 0;
}

static int
axes_ok(int a, int b, int c)
{
    if (a < 0 || a > 2 || b < 0 || b > 2 || c < 0 || c > 2) {
        PyErr_SetString(PyExc_ValueError, "axes: expected three of 0, 1, 2");
        return 0;
    }
    return 1;
}

static PyObject *
py_check(PyObject *self, PyObject *args)
{
    Py_buffer b[1] = {{0}};
    const Py_ssize_t w[1] = {9};
    double tol;
    Py_ssize_t n, bad;
    PyObject *res = NULL;
    if (!PyArg_ParseTuple(args, "y*d", &b[0], &tol))
        return NULL;
    if (rows_all(b, w, 1, &n) == 0) {
        Py_BEGIN_ALLOW_THREADS
        bad = check_loop(b[0].buf, n, tol);
        Py_END_ALLOW_THREADS
        res = PyLong_FromSsize_t(bad);
    }
    release(b, 1);
    return res;
}

static PyObject *
py_quaternion_matrix(PyObject *self, PyObject *args)
{
    Py_buffer b[2] = {{0}};
    const Py_ssize_t w[2] = {4, 9};
    int last, conj;
    double tol;
    Py_ssize_t n, bu = 0, bz = 0;
    PyObject *res = NULL;
    if (!PyArg_ParseTuple(args, "y*w*ppd", &b[0], &b[1], &last, &conj, &tol))
        return NULL;
    if (rows_all(b, w, 2, &n) == 0) {
        Py_BEGIN_ALLOW_THREADS
        quaternion_matrix_loop(b[0].buf, b[1].buf, n, last, conj, tol, &bu, &bz);
        Py_END_ALLOW_THREADS
        res = Py_BuildValue("nn", bu, bz);
    }
    release(b, 2);
    return res;
}

static PyObject *
py_matrix_quaternion(PyObject *self, PyObject *args)
{
    Py_buffer b[2] = {{0}};
    const Py_ssize_t w[2] = {9, 4};
    int conj, last;
    double tol;
    Py_ssize_t n, bad;
    PyObject *res = NULL;
    if (!PyArg_ParseTuple(args, "y*w*ppd", &b[0], &b[1], &conj, &last, &tol))
        return NULL;
    if (rows_all(b, w, 2, &n) == 0) {
        Py_BEGIN_ALLOW_THREADS
        bad = matrix_quaternion_loop(b[0].buf, b[1].buf, n, conj, last, tol);
        Py_END_ALLOW_THREADS
        res = PyLong_FromSsize_t(bad);
    }
    release(b, 2);
    return res;
}

static PyObject *
py_euler_matrix(PyObject *self, PyObject *args)
{
    Py_buffer b[2] = {{0}};
    const Py_ssize_t w[2] = {3, 9};
    int a0, a1, a2, intrinsic, tr;
    Py_ssize_t n;
    PyObject *res = NULL;
    if (!PyArg_ParseTuple(args, "y*w*(iii)pp", &b[0], &b[1], &a0, &a1, &a2, &intrinsic, &tr))
        return NULL;
    if (rows_all(b, w, 2, &n) == 0 && axes_ok(a0, a1, a2)) {
        Py_BEGIN_ALLOW_THREADS
        euler_matrix_loop(b[0].buf, b[1].buf, n, a0, a1, a2, intrinsic, tr);
        Py_END_ALLOW_THREADS
        res = Py_NewRef(Py_None);
    }
    release(b, 2);
    return res;
}

static PyObject *
py_euler_of_matrix(PyObject *self, PyObject *args)
{
    Py_buffer b[3] = {{0}};
    const Py_ssize_t w[3] = {9, 3, 1};
    PyObject *dist_obj;
    int i, j, k, proper, intrinsic, conj;
    double eps, tol, scale;
    Py_ssize_t n, bad;
    PyObject *res = NULL;
    if (!PyArg_ParseTuple(args, "y*w*O(iii)pdppdd", &b[0], &b[1], &dist_obj, &i, &j, &k, &proper, &eps, &intrinsic,
                          &conj, &tol, &scale))
        return NULL;
    int with_dist = dist_obj != Py_None;
    if (with_dist && PyObject_GetBuffer(dist_obj, &b[2], PyBUF_WRITABLE | PyBUF_C_CONTIGUOUS | PyBUF_FORMAT) < 0)
        goto done;
    if (rows_all(b, w, with_dist ? 3 : 2, &n) == 0 && axes_ok(i, j, k)) {
        Py_BEGIN_ALLOW_THREADS
        bad = euler_of_matrix_loop(b[0].buf, b[1].buf, with_dist ? b[2].buf : NULL, n, i, j, k, proper, eps,
                                   intrinsic, conj, tol, scale);
        Py_END_ALLOW_THREADS
        res = PyLong_FromSsize_t(bad);
    }
done:
    release(b, 3);
    return res;
}

/* compose and turn: two inputs, one output, a tolerance; rows failing the check counted */
typedef Py_ssize_t (*pair_loop)(const double *restrict, const double *restrict, double *restrict, Py_ssize_t,
                                double);

static PyObject *
pair_entry(PyObject *args, const Py_ssize_t *w, pair_loop loop)
{
    Py_buffer b[3] = {{0}};
    double tol;
    Py_ssize_t n, bad;
    PyObject *res = NULL;
    if (!PyArg_ParseTuple(args, "y*y*w*d", &b[0], &b[1], &b[2], &tol))
        return NULL;
    if (rows_all(b, w, 3, &n) == 0) {
        Py_BEGIN_ALLOW_THREADS
        bad = loop(b[0].buf, b[1].buf, b[2].buf, n, tol);
        Py_END_ALLOW_THREADS
        res = PyLong_FromSsize_t(bad);
    }
    release(b, 3);
    return res;
}

static PyObject *
py_compose(PyObject *self, PyObject *args)
{
    static const Py_ssize_t w[3] = {9, 9, 9};
    return pair_entry(args, w, compose_loop);
}

static PyObject *
py_turn(PyObject *self, PyObject *args)
{
    static const Py_ssize_t w[3] = {9, 3, 3};
    return pair_entry(args, w, turn_loop);
}

static PyMethodDef methods[] = {
    {"check", py_check, METH_VARARGS,
     "check(m, tol) -> rows of (n, 9) that are not rotations within tol"},
    {"quaternion_matrix", py_quaternion_matrix, METH_VARARGS,
     "quaternion_matrix(q, out, scalar_last, conjugate, tol) -> (rows off unit length, rows of zero length)"},
    {"matrix_quaternion", py_matrix_quaternion, METH_VARARGS,
     "matrix_quaternion(m, out, conjugate, scalar_last, tol) -> rows that are not rotations"},
    {"euler_matrix", py_euler_matrix, METH_VARARGS,
     "euler_matrix(angles_in_radians, out, (a0, a1, a2), intrinsic, transpose)"},
    {"euler_of_matrix", py_euler_of_matrix, METH_VARARGS,
     "euler_of_matrix(m, out, distance_or_None, (i, j, k), proper, eps, intrinsic, conjugate, tol, scale)"
     " -> rows that are not rotations"},
    {"compose", py_compose, METH_VARARGS, "compose(a, b, out, tol) -> rows of a or b that are not rotations"},
    {"turn", py_turn, METH_VARARGS, "turn(m, v, out, tol) -> rows of m that are not rotations"},
    {NULL, NULL, 0, NULL},
};

static struct PyModuleDef module = {
    PyModuleDef_HEAD_INIT, "_loops", "Compiled loops for large batches of rotations (see compiled.py).", -1, methods,
};

PyMODINIT_FUNC
PyInit__loops(void)
{
    return PyModule_Create(&module);
}
