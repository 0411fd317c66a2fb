/*
 * Compiled loops for large batches of rotations: posekit.core._loops.
 *
 * Optional: posekit/core/compiled.py uses these when the module was built and falls back
 * to the numpy kernels of rotation.py otherwise (same formulas, same results to rounding).
 * The loops are plain arithmetic on C-contiguous float64 rows, sines, cosines and
 * arctangents included (sincos_reduced, atan2_branchless), so each runs as one call.
 * Each loop also counts the rows that fail the input check it fuses (orthonormality and
 * determinant of matrices, length of quaternions), so the caller reads the data once and
 * raises posekit's typed error, with its full message, only when the count is not zero.
 *
 * Formulas and their sources are the ones beside the numpy kernels in rotation.py,
 * checks.py and ops.py:
 *   quaternion -> matrix: Shuster, J. Astronautical Sciences 41(4), 1993 (Hamilton, active);
 *   matrix -> quaternion: Shepperd, J. Guidance and Control 1(3), 1978 (largest diagonal);
 *   quaternion -> Euler: Bernardes & Viollet, PLoS ONE 17(11), 2022;
 *   sine and cosine: additive range reduction (Cody & Waite 1980) and Taylor series;
 *   arctangent: a pi/6 shift and Taylor series (common practice).
 *
 * Only the Python C API's buffer protocol is used (no numpy headers), so building needs a
 * C compiler and Python's headers, nothing else.  The GIL is released inside every loop.
 */
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <math.h>
#include <string.h>

/* One binary, the widest vector unit the processor has: gcc builds each loop for AVX-512,
 * AVX2 and the x86-64 baseline and picks one when the module loads. */
#if defined(__GNUC__) && __GNUC__ >= 11 && !defined(__clang__) && defined(__x86_64__) && defined(__linux__)
#define WIDE __attribute__((target_clones("arch=x86-64-v4", "arch=x86-64-v3", "default")))
#else
#define WIDE
#endif

#define POLE_SNAP 1e-14 /* the same as rotation.POLE_SNAP */

/* Rows are processed in tiles: a tile is copied into entry-major local arrays (one
 * array per matrix entry), the arithmetic runs over the tile with contiguous operands so
 * the compiler vectorises it, and the results are copied back into rows.  A short last
 * tile is padded with the identity (which passes every check) and not written back. */
#define TILE 64
#define ALWAYS_INLINE static inline __attribute__((always_inline))

ALWAYS_INLINE void
load_tile(const double *restrict src, int width, Py_ssize_t nt, double *restrict dst, const double *pad)
{
    for (Py_ssize_t t = 0; t < TILE; t++)
        for (int e = 0; e < width; e++)
            dst[e * TILE + t] = t < nt ? src[width * t + e] : pad[e];
}

ALWAYS_INLINE void
store_tile(double *restrict dst, int width, Py_ssize_t nt, const double *restrict src)
{
    for (Py_ssize_t t = 0; t < nt; t++)
        for (int e = 0; e < width; e++)
            dst[width * t + e] = src[e * TILE + t];
}

static const double EYE[9] = {1, 0, 0, 0, 1, 0, 0, 0, 1};
static const double UNIT_Q[4] = {1, 0, 0, 0};
static const double ZEROS[4] = {0, 0, 0, 0};

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

/* A row fails when the error (squared here) is not within tolerance or the determinant is not >= 0
 * (NaN fails both, so nothing unreadable passes). */
#define BAD_MATRIX(err2, det, tol) ((!((err2) <= (tol) * (tol))) | (!((det) >= 0.0)))

/* ---------------------------------------------------------------------------------- */
/* the loops                                                                           */

WIDE static Py_ssize_t
check_loop(const double *restrict m, Py_ssize_t n, double tol)
{
    Py_ssize_t bad = 0;
    double a[9 * TILE];
    for (Py_ssize_t r0 = 0; r0 < n; r0 += TILE) {
        load_tile(m + 9 * r0, 9, TILE_ROWS(n, r0), a, EYE);
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double err, det;
            GRAM_DET(a, err, det);
            bad += BAD_MATRIX(err, det, tol);
        }
    }
    return bad;
}

/* Active matrix of quaternion components into tile row t of `o`: every product scaled by
 * `s` (2 / |q|^2 divides a length out; 2 for unit quaternions).  `tr` writes the transpose. */
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

/* Unit Hamilton quaternion rows -> active matrix rows, the length divided out in the same
 * pass.  `last`: scalar in slot 3; `conj`: use the conjugate (the transposed matrix).
 * Counts rows whose length is off 1 by more than `tol` (`*bad_unit`) and rows shorter
 * than 1e-12 (`*bad_zero`). */
WIDE static void
quaternion_matrix_loop(const double *restrict q, double *restrict out, Py_ssize_t n, int last, int conj,
                       double tol, Py_ssize_t *bad_unit, Py_ssize_t *bad_zero)
{
    const int iw = last ? 3 : 0, ix = last ? 0 : 1;
    Py_ssize_t bu = 0, bz = 0;
    double a[4 * TILE], o[9 * TILE];
    const double pad_last[4] = {0, 0, 0, 1};
    for (Py_ssize_t r0 = 0; r0 < n; r0 += TILE) {
        Py_ssize_t nt = TILE_ROWS(n, r0);
        load_tile(q + 4 * r0, 4, nt, a, last ? pad_last : UNIT_Q);
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double w = AT(a, iw), x = AT(a, ix), y = AT(a, ix + 1), z = AT(a, ix + 2);
            double nn = w * w + x * x + y * y + z * z;
            double len = sqrt(nn);
            bu += !(fabs(len - 1.0) <= tol);
            bz += !(len >= 1e-12);
            double s = 2.0 / nn;
            MATRIX_OF_PARTS(o, w, x, y, z, s, conj);
        }
        store_tile(out + 9 * r0, 9, nt, o);
    }
    *bad_unit = bu;
    *bad_zero = bz;
}

/* Shepperd's quaternion (w >= 0) of tile row t; `i01` .. `i21` are the entry indices of
 * m01 .. m21 (swapped to read the matrix transposed).  Every candidate is computed and
 * the largest diagonal picks one by selects, with no branch, so the loop vectorises. */
#define SHEPPERD(a, w, x, y, z)                                                            \
    do {                                                                                   \
        double m00 = AT(a, 0), m11 = AT(a, 4), m22 = AT(a, 8);                             \
        double m01 = AT(a, i01), m10 = AT(a, i10), m02 = AT(a, i02);                       \
        double m20 = AT(a, i20), m12 = AT(a, i12), m21 = AT(a, i21);                       \
        double trace = m00 + m11 + m22, lo = 1.0 - trace;                                  \
        double d0 = 1.0 + trace, d1 = lo + 2.0 * m00, d2 = lo + 2.0 * m11, d3 = lo + 2.0 * m22; \
        double vx = m21 - m12, vy = m02 - m20, vz = m10 - m01;                             \
        double sxy = m01 + m10, sxz = m02 + m20, syz = m12 + m21;                          \
        /* the numpy kernel's order: later columns win only when strictly larger */        \
        double w1 = d1 > d0 ? vx : d0, x1 = d1 > d0 ? d1 : vx, y1 = d1 > d0 ? sxy : vy;    \
        double z1 = d1 > d0 ? sxz : vz, top1 = d1 > d0 ? d1 : d0;                          \
        double w2 = d2 > top1 ? vy : w1, x2 = d2 > top1 ? sxy : x1, y2 = d2 > top1 ? d2 : y1; \
        double z2 = d2 > top1 ? syz : z1, top2 = d2 > top1 ? d2 : top1;                    \
        w = d3 > top2 ? vz : w2;                                                           \
        x = d3 > top2 ? sxz : x2;                                                          \
        y = d3 > top2 ? syz : y2;                                                          \
        z = d3 > top2 ? d3 : z2;                                                           \
        double inv = 1.0 / sqrt(w * w + x * x + y * y + z * z);                            \
        inv = w < 0.0 ? -inv : inv;                                                        \
        w *= inv; x *= inv; y *= inv; z *= inv;                                            \
    } while (0)

/* entry indices of the off-diagonal entries, read as stored or transposed */
#define OFF_DIAGONAL_INDICES(tr)                                                           \
    const int i01 = tr ? 3 : 1, i10 = tr ? 1 : 3, i02 = tr ? 6 : 2, i20 = tr ? 2 : 6,      \
              i12 = tr ? 7 : 5, i21 = tr ? 5 : 7

WIDE static Py_ssize_t
matrix_quaternion_loop(const double *restrict m, double *restrict out, Py_ssize_t n, int tr, int last,
                       double tol)
{
    const int iw = last ? 3 : 0, ix = last ? 0 : 1;
    OFF_DIAGONAL_INDICES(tr);
    Py_ssize_t bad = 0;
    double a[9 * TILE], o[4 * TILE];
    for (Py_ssize_t r0 = 0; r0 < n; r0 += TILE) {
        Py_ssize_t nt = TILE_ROWS(n, r0);
        load_tile(m + 9 * r0, 9, nt, a, EYE);
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double err, det, w, x, y, z;
            GRAM_DET(a, err, det);
            bad += BAD_MATRIX(err, det, tol);
            SHEPPERD(a, w, x, y, z);
            AT(o, iw) = w;
            AT(o, ix) = x;
            AT(o, ix + 1) = y;
            AT(o, ix + 2) = z;
        }
        store_tile(out + 4 * r0, 4, nt, o);
    }
    return bad;
}

/* sin and cos of x for |x| <= SINCOS_LIMIT, with no branch (so the tile loops vectorise):
 * additive range reduction x = k pi/2 + r, |r| <= pi/4, with pi/2 split in three parts whose
 * first two have 32 significant bits, so k * part is exact for |k| < 2^21 (Cody & Waite,
 * "Software Manual for the Elementary Functions", 1980; the parts were computed from pi at
 * 60 digits with mpmath, and test_kernel_routes.py recomputes them).  On |r| <= pi/4 the
 * Taylor series to r^17 (sin) and r^18 (cos) leave a remainder below 1e-19 (common practice).
 * The quadrant k mod 4 picks the signs.  Larger |x| is left to libm by the caller. */
#define SINCOS_LIMIT 1e5
#define PIO2_1 0x1.921fb54400000p+0
#define PIO2_2 0x1.0b4611a600000p-34
#define PIO2_3 0x1.3198a2e037073p-69
#define TWO_OVER_PI 0x1.45f306dc9c883p-1
#define ROUNDER 0x1.8p52 /* adding and subtracting 1.5 * 2^52 rounds to the nearest integer */

ALWAYS_INLINE void
sincos_reduced(double x, double *sn, double *cs)
{
    double k = (x * TWO_OVER_PI + ROUNDER) - ROUNDER;
    double r = ((x - k * PIO2_1) - k * PIO2_2) - k * PIO2_3;
    double r2 = r * r;
    double ps = -0x1.5555555555555p-3 + r2 * (0x1.1111111111111p-7 + r2 * (-0x1.a01a01a01a01ap-13
              + r2 * (0x1.71de3a556c734p-19 + r2 * (-0x1.ae64567f544e4p-26 + r2 * (0x1.6124613a86d09p-33
              + r2 * (-0x1.ae7f3e733b81fp-41 + r2 * 0x1.952c77030ad4ap-49))))));
    double pc = -0.5 + r2 * (0x1.5555555555555p-5 + r2 * (-0x1.6c16c16c16c17p-10 + r2 * (0x1.a01a01a01a01ap-16
              + r2 * (-0x1.27e4fb7789f5cp-22 + r2 * (0x1.1eed8eff8d898p-29 + r2 * (-0x1.93974a8c07c9dp-37
              + r2 * (0x1.ae7f3e733b81fp-45 - r2 * 0x1.6827863b97d97p-53)))))));
    double s = r + r * r2 * ps, c = 1.0 + r2 * pc;
    double q = k - 4.0 * ((k * 0.25 + ROUNDER) - ROUNDER); /* k mod 4, as one of -2 .. 2 */
    double sq = q == 0.0 ? s : (q == 1.0 ? c : (q == -1.0 ? -c : -s));
    double cq = q == 0.0 ? c : (q == 1.0 ? -s : (q == -1.0 ? s : -c));
    *sn = sq;
    *cs = cq;
}

/* Euler angles (radians) -> matrix rows: the elementary quaternions (cos, sin of half of
 * each angle) multiplied in the sequence's order (intrinsic e1 e2 e3, extrinsic e3 e2 e1),
 * then turned into the matrix; `tr` writes the transpose. */
WIDE static void
euler_matrix_loop(const double *restrict ang, double *restrict out, Py_ssize_t n, int ax0, int ax1, int ax2,
                  int intrinsic, int tr)
{
    /* one-hot masks put the sine on the turn's axis without indexing by a run-time number */
    const double m0x = ax0 == 0, m0y = ax0 == 1, m0z = ax0 == 2;
    const double m1x = ax1 == 0, m1y = ax1 == 1, m1z = ax1 == 2;
    const double m2x = ax2 == 0, m2y = ax2 == 1, m2z = ax2 == 2;
    double a[3 * TILE], c[3 * TILE], s[3 * TILE], o[9 * TILE];
    for (Py_ssize_t r0 = 0; r0 < n; r0 += TILE) {
        Py_ssize_t nt = TILE_ROWS(n, r0);
        load_tile(ang + 3 * r0, 3, nt, a, ZEROS);
        int large = 0;
        for (Py_ssize_t t = 0; t < TILE; t++) {
            for (int k = 0; k < 3; k++) {
                double h = 0.5 * AT(a, k), sk, ck;
                large |= !(fabs(h) <= SINCOS_LIMIT);
                sincos_reduced(h, &sk, &ck);
                AT(s, k) = sk;
                AT(c, k) = ck;
            }
        }
        if (large) /* beyond the reduction's range: libm's own reduction */
            for (Py_ssize_t t = 0; t < TILE; t++)
                for (int k = 0; k < 3; k++)
                    if (!(fabs(0.5 * AT(a, k)) <= SINCOS_LIMIT)) {
                        AT(s, k) = sin(0.5 * AT(a, k));
                        AT(c, k) = cos(0.5 * AT(a, k));
                    }
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double c0 = AT(c, 0), c1 = AT(c, 1), c2 = AT(c, 2), s0 = AT(s, 0), s1 = AT(s, 1), s2 = AT(s, 2);
            double a0w = c0, a0x = s0 * m0x, a0y = s0 * m0y, a0z = s0 * m0z;
            double a2w = c2, a2x = s2 * m2x, a2y = s2 * m2y, a2z = s2 * m2z;
            double bw = c1, bx = s1 * m1x, by = s1 * m1y, bz = s1 * m1z;
            /* first and last factor of the product */
            double fw = intrinsic ? a0w : a2w, fx = intrinsic ? a0x : a2x;
            double fy = intrinsic ? a0y : a2y, fz = intrinsic ? a0z : a2z;
            double lw = intrinsic ? a2w : a0w, lx = intrinsic ? a2x : a0x;
            double ly = intrinsic ? a2y : a0y, lz = intrinsic ? a2z : a0z;
            /* p = f (x) b, Hamilton product */
            double pw = fw * bw - fx * bx - fy * by - fz * bz;
            double px = fw * bx + fx * bw + fy * bz - fz * by;
            double py = fw * by - fx * bz + fy * bw + fz * bx;
            double pz = fw * bz + fx * by - fy * bx + fz * bw;
            /* q = p (x) l */
            double w = pw * lw - px * lx - py * ly - pz * lz;
            double x = pw * lx + px * lw + py * lz - pz * ly;
            double y = pw * ly - px * lz + py * lw + pz * lx;
            double z = pw * lz + px * ly - py * lx + pz * lw;
            MATRIX_OF_PARTS(o, w, x, y, z, 2.0, tr);
        }
        store_tile(out + 9 * r0, 9, nt, o);
    }
}

/* atan2(y, x) with C99's quadrants, no branch (a zero's sign is not looked at: atan2(0, -0) is
 * 0 here, pi in C99; the callers' zero-zero cases are at a pole, where that angle is unused):
 * t = min/max of |x|, |y| in [0, 1]; above tan(pi/12) the identity
 * atan t = pi/6 + atan((t sqrt3 - 1) / (sqrt3 + t)) brings it into [0, tan(pi/12)], where
 * the Taylor series to t^31 leaves a remainder below 1e-19 (both common practice); one
 * division picks the reduced argument.  Absolute error a few 1e-16. */
#define PI_OVER_6 0x1.0c152382d7366p-1
#define PI_OVER_2 0x1.921fb54442d18p+0
#define SQRT3 0x1.bb67ae8584caap+0
#define TAN_PI_OVER_12 0x1.126145e9ecd56p-2

ALWAYS_INLINE double
atan2_branchless(double y, double x)
{
    double ax = fabs(x), ay = fabs(y);
    double hi = ax > ay ? ax : ay, lo = ax > ay ? ay : ax;
    double reduce = lo > hi * TAN_PI_OVER_12 ? 1.0 : 0.0;
    double num = reduce > 0.0 ? lo * SQRT3 - hi : lo, den = reduce > 0.0 ? hi * SQRT3 + lo : hi;
    double t = den > 0.0 ? num / (den > 0.0 ? den : 1.0) : 0.0;
    double z = t * t;
    double r = t + t * z * (-1.0 / 3.0 + z * (1.0 / 5.0 + z * (-1.0 / 7.0 + z * (1.0 / 9.0 + z * (-1.0 / 11.0
             + z * (1.0 / 13.0 + z * (-1.0 / 15.0 + z * (1.0 / 17.0 + z * (-1.0 / 19.0 + z * (1.0 / 21.0
             + z * (-1.0 / 23.0 + z * (1.0 / 25.0 + z * (-1.0 / 27.0 + z * (1.0 / 29.0 + z * (-1.0 / 31.0)))))))))))))));
    r = reduce > 0.0 ? r + PI_OVER_6 : r;
    r = ay > ax ? PI_OVER_2 - r : r;
    r = x < 0.0 ? M_PI - r : r;
    return y < 0.0 ? -r : r;
}

/* Matrix rows -> Euler angles (Bernardes & Viollet 2022) in one pass: the matrix check,
 * Shepperd's quaternion (read transposed when `tr`: the conjugate), the method's four
 * numbers a, b, c, d for axes (i, j, k) as it reads the sequence (reversed for intrinsic;
 * k the missing axis of a proper sequence; eps the permutation's sign), three atan2, the
 * pole snap (the third listed angle is 0 at a pole, as euler_of_quaternion documents),
 * the wrap of the outer angles to (-pi, pi], then the angles times `scale` in the user's
 * order into `out` (n, 3) and, unless NULL, the pole distance into `dist` (n). */
WIDE static Py_ssize_t
euler_of_matrix_loop(const double *restrict m, double *restrict out, double *restrict dist, Py_ssize_t n,
                     int i, int j, int k, int proper, double eps, int intrinsic, int tr, double tol, double scale)
{
    const double ix = i == 0, iy = i == 1, iz = i == 2;
    const double jx = j == 0, jy = j == 1, jz = j == 2;
    const double kx = k == 0, ky = k == 1, kz = k == 2;
    OFF_DIAGONAL_INDICES(tr);
    Py_ssize_t bad = 0;
    double a[9 * TILE], o[4 * TILE];
    for (Py_ssize_t r0 = 0; r0 < n; r0 += TILE) {
        Py_ssize_t nt = TILE_ROWS(n, r0);
        load_tile(m + 9 * r0, 9, nt, a, EYE);
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double err, det, w, x, y, z;
            GRAM_DET(a, err, det);
            bad += BAD_MATRIX(err, det, tol);
            SHEPPERD(a, w, x, y, z);
            double qi = ix * x + iy * y + iz * z;
            double qj = jx * x + jy * y + jz * z;
            double qk = kx * x + ky * y + kz * z;
            double va = proper ? w : w - qj;
            double vb = proper ? qi : qi + qk * eps;
            double vc = proper ? qj : qj + w;
            double vd = proper ? qk * eps : qk * eps - qi;
            double sp = sqrt(va * va + vb * vb), sm = sqrt(vc * vc + vd * vd); /* |entries| <= 2 */
            double tp = atan2_branchless(vb, va), tm = atan2_branchless(vd, vc);
            double t2 = 2.0 * atan2_branchless(sm, sp);
            double t1 = tp - tm, t3 = tp + tm;
            double z1 = 2.0 * tp, mz = -2.0 * tm, pz = 2.0 * tm;
            double at_zero = sm <= POLE_SNAP ? 1.0 : 0.0, at_pi = sp <= POLE_SNAP ? 1.0 : 0.0;
            double pole = at_zero + at_pi > 0.0 ? 1.0 : 0.0;
            double s1 = at_zero > 0.0 ? z1 : (at_pi > 0.0 ? mz : t1);
            double s3 = at_zero > 0.0 ? z1 : (at_pi > 0.0 ? pz : t3);
            t1 = intrinsic ? (1.0 - pole) * t1 : s1;
            t3 = intrinsic ? s3 : (1.0 - pole) * t3;
            /* every value first, then selects: the loop stays free of branches */
            double tb2 = t2 - 0.5 * M_PI, tpi = M_PI - t2, t3e = eps * t3;
            double d_proper = t2 < tpi ? t2 : tpi, d_tait = 0.5 * M_PI - fabs(tb2);
            double d = proper ? d_proper : d_tait;
            t3 = proper ? t3 : t3e;
            t2 = proper ? t2 : tb2;
            double w1 = t1 > M_PI ? t1 - 2.0 * M_PI : t1, w3 = t3 > M_PI ? t3 - 2.0 * M_PI : t3;
            w1 = w1 <= -M_PI ? w1 + 2.0 * M_PI : w1;
            w3 = w3 <= -M_PI ? w3 + 2.0 * M_PI : w3;
            AT(o, 0) = (intrinsic ? w3 : w1) * scale; /* the user's first angle */
            AT(o, 1) = t2 * scale;
            AT(o, 2) = (intrinsic ? w1 : w3) * scale;
            AT(o, 3) = d > 0.0 ? d : 0.0;
        }
        store_tile(out + 3 * r0, 3, nt, o);
        if (dist != NULL)
            memcpy(dist + r0, o + 3 * TILE, (size_t)nt * sizeof(double));
    }
    return bad;
}

WIDE static Py_ssize_t
compose_loop(const double *restrict a, const double *restrict b, double *restrict out, Py_ssize_t n, double tol)
{
    Py_ssize_t bad = 0;
    double p[9 * TILE], q[9 * TILE], o[9 * TILE];
    for (Py_ssize_t r0 = 0; r0 < n; r0 += TILE) {
        Py_ssize_t nt = TILE_ROWS(n, r0);
        load_tile(a + 9 * r0, 9, nt, p, EYE);
        load_tile(b + 9 * r0, 9, nt, q, EYE);
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double e1, d1, e2, d2;
            GRAM_DET(p, e1, d1);
            GRAM_DET(q, e2, d2);
            bad += BAD_MATRIX(e1, d1, tol) | BAD_MATRIX(e2, d2, tol);
            for (int i = 0; i < 3; i++)
                for (int j = 0; j < 3; j++)
                    AT(o, 3 * i + j) = AT(p, 3 * i) * AT(q, j) + AT(p, 3 * i + 1) * AT(q, 3 + j)
                                     + AT(p, 3 * i + 2) * AT(q, 6 + j);
        }
        store_tile(out + 9 * r0, 9, nt, o);
    }
    return bad;
}

WIDE static Py_ssize_t
turn_loop(const double *restrict m, const double *restrict v, double *restrict out, Py_ssize_t n, double tol)
{
    Py_ssize_t bad = 0;
    double a[9 * TILE], u[3 * TILE], o[3 * TILE];
    for (Py_ssize_t r0 = 0; r0 < n; r0 += TILE) {
        Py_ssize_t nt = TILE_ROWS(n, r0);
        load_tile(m + 9 * r0, 9, nt, a, EYE);
        load_tile(v + 3 * r0, 3, nt, u, ZEROS);
        for (Py_ssize_t t = 0; t < TILE; t++) {
            double err, det;
            GRAM_DET(a, err, det);
            bad += BAD_MATRIX(err, det, tol);
            AT(o, 0) = AT(a, 0) * AT(u, 0) + AT(a, 1) * AT(u, 1) + AT(a, 2) * AT(u, 2);
            AT(o, 1) = AT(a, 3) * AT(u, 0) + AT(a, 4) * AT(u, 1) + AT(a, 5) * AT(u, 2);
            AT(o, 2) = AT(a, 6) * AT(u, 0) + AT(a, 7) * AT(u, 1) + AT(a, 8) * AT(u, 2);
        }
        store_tile(out + 3 * r0, 3, nt, o);
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
    int tr, last;
    double tol;
    Py_ssize_t n, bad;
    PyObject *res = NULL;
    if (!PyArg_ParseTuple(args, "y*w*ppd", &b[0], &b[1], &tr, &last, &tol))
        return NULL;
    if (rows_all(b, w, 2, &n) == 0) {
        Py_BEGIN_ALLOW_THREADS
        bad = matrix_quaternion_loop(b[0].buf, b[1].buf, n, tr, last, tol);
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
    int i, j, k, proper, intrinsic, tr;
    double eps, tol, scale;
    Py_ssize_t n, bad;
    PyObject *res = NULL;
    if (!PyArg_ParseTuple(args, "y*w*O(iii)pdppdd", &b[0], &b[1], &dist_obj, &i, &j, &k, &proper, &eps, &intrinsic,
                          &tr, &tol, &scale))
        return NULL;
    int with_dist = dist_obj != Py_None;
    if (with_dist && PyObject_GetBuffer(dist_obj, &b[2], PyBUF_WRITABLE | PyBUF_C_CONTIGUOUS | PyBUF_FORMAT) < 0)
        goto done;
    if (rows_all(b, w, with_dist ? 3 : 2, &n) == 0 && axes_ok(i, j, k)) {
        Py_BEGIN_ALLOW_THREADS
        bad = euler_of_matrix_loop(b[0].buf, b[1].buf, with_dist ? b[2].buf : NULL, n, i, j, k, proper, eps,
                                   intrinsic, tr, tol, scale);
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
     "matrix_quaternion(m, out, transpose, scalar_last, tol) -> rows that are not rotations"},
    {"euler_matrix", py_euler_matrix, METH_VARARGS,
     "euler_matrix(angles_in_radians, out, (a0, a1, a2), intrinsic, transpose)"},
    {"euler_of_matrix", py_euler_of_matrix, METH_VARARGS,
     "euler_of_matrix(m, out, distance_or_None, (i, j, k), proper, eps, intrinsic, transpose, tol, scale)"
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
