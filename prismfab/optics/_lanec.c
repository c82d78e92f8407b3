/* One event of a group of rays that all meet the same refracting face, in one pass per ray.
 *
 * Compiled lane of prismfab's tracer (see _lane.py). It does exactly the arithmetic of the numpy
 * lane (_engine._verify, _face.interact/_refract_all/_fresnel/rotate/_near_normal), operation by
 * operation and in the same order, so a ray gets the same bits whichever lane traces it; build
 * without contraction of multiply-add (-ffp-contract=off) and without fast-math.
 *
 * Rows are separate contiguous arrays of n doubles (component-major ray state). A ray whose
 * predicted hit is not verified, or that is totally reflected, is flagged: the caller keeps its
 * old state and sends it through the full search and the numpy face code.
 */
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

/* Raised whenever a signature or a layout below changes; _lane.py refuses a library built from
 * another version (a stale build in an editable install) and runs numpy instead. */
#define LANE_VERSION 3

int prismfab_lane_version(void) { return LANE_VERSION; }

#define FLAG_DONE 0
#define FLAG_UNVERIFIED 1
#define FLAG_TIR 2

#if defined(__GNUC__) && !defined(__clang__) && defined(__x86_64__) && defined(__linux__)
/* one copy per vector width, picked at load time; the arithmetic is the same IEEE operations */
#define LANE_CLONES __attribute__((target_clones("avx512f", "avx2", "default")))
#else
#define LANE_CLONES
#endif

static inline double pick(int c, double a, double b) { return c ? a : b; }

/* a if c else b, by bits: a select the compiler keeps as arithmetic, so a store of it stays an
 * unconditional (vectorisable) store */
static inline double blend(int c, double a, double b)
{
    uint64_t ua, ub;
    memcpy(&ua, &a, 8);
    memcpy(&ub, &b, 8);
    const uint64_t m = (uint64_t)0 - (uint64_t)(c != 0);
    const uint64_t r = (ua & m) | (ub & ~m);
    double x;
    memcpy(&x, &r, 8);
    return x;
}

/* The pass over the rays has no branch and no conditional store: every ray computes every
 * result, and a flagged ray stores its old state back (blend), so compilers can run several
 * rays per vector instruction. */
static inline __attribute__((always_inline)) ptrdiff_t lane(
    const int two, const int fresnel, const int far, ptrdiff_t n, const double *face, const double *optics,
    const double *restrict ox, const double *restrict oy, const double *restrict oz,
    double *restrict dx, double *restrict dy, double *restrict dz,
    double *restrict ux, double *restrict uy, double *restrict uz,
    double *restrict a0, double *restrict b0, double *restrict a1, double *restrict b1,
    double *restrict opl, double *restrict hx, double *restrict hy, double *restrict hz,
    double *restrict cosi, unsigned char *restrict flag, int16_t *restrict rec_p,
    int16_t *restrict rec_f, int8_t *restrict rec_k)
{
    const double nv0 = face[0], nv1 = face[1], nv2 = face[2], off = face[3];
    const double e0 = face[4], e1 = face[5], e2 = face[6], lo_e = face[7], hi_e = face[8];
    const double h0 = face[9], h1 = face[10], h2 = face[11], lo_h = face[12], hi_h = face[13];
    const int entering = optics[0] != 0.0;
    const double n1 = optics[1], n2 = optics[2], eta = optics[3], amp = optics[4];
    const double eps = optics[5], fast_sin2 = optics[6], oblique = optics[7], degenerate = optics[8];
    const double sign = entering ? 1.0 : -1.0;
    /* the normal facing the ray; + 0.0 turns -0.0 into +0.0 as the numpy lane does */
    const double na0 = nv0 * sign + 0.0, na1 = nv1 * sign + 0.0, na2 = nv2 * sign + 0.0;
    const double eta2 = eta * eta, csign = entering ? -1.0 : 1.0, tmin = entering ? -INFINITY : 0.0;
    const double tlo = entering ? eps : -INFINITY;
    const int16_t prism = (int16_t)optics[9], face_no = (int16_t)optics[10];
    const int8_t kind = (int8_t)optics[11];
    ptrdiff_t flagged = 0;

    for (ptrdiff_t i = 0; i < n; i++) {
        const double o0 = ox[i], o1 = oy[i], o2 = oz[i];
        const double d0 = dx[i], d1 = dy[i], d2 = dz[i];
        const double u0 = ux[i], u1 = uy[i], u2 = uz[i];
        /* distance and hit point (pdot skips zero components: adding +-0 changes nothing) */
        const double dn = nv0 * d0 + nv1 * d1 + nv2 * d2;
        double t = off - (nv0 * o0 + nv1 * o1 + nv2 * o2);
        t = t / dn;
        t = pick(t < tmin, 0.0, t);  /* inside: np.maximum(t, 0) (NaN stays NaN) */
        const double p0 = t * d0 + o0, p1 = t * d1 + o1, p2 = t * d2 + o2;
        const double xe = e0 * p0 + e1 * p1 + e2 * p2;
        const double xh = h0 * p0 + h1 * p1 + h2 * p2;
        const int toward = (dn * csign > 0.0) & (t > tlo);
        const int ok = toward & (xe >= lo_e) & (xe <= hi_e) & (xh >= lo_h) & (xh <= hi_h);
        const double c = dn * csign;
        const double sin2 = 1.0 - c * c;
        const double kk = 1.0 - sin2 * eta2;
        const int go = ok & (kk >= 0.0);
        flagged += !go;
        flag[i] = (unsigned char)(go ? FLAG_DONE : (ok ? FLAG_TIR : FLAG_UNVERIFIED));
        hx[i] = p0;  /* (flagged rays: rewritten or cleared by the caller) */
        hy[i] = p1;
        hz[i] = p2;
        cosi[i] = c;
        rec_p[i] = prism;
        rec_f[i] = face_no;
        rec_k[i] = kind;
        const double ol = opl[i];
        opl[i] = blend(go, ol + t * n1, ol);  /* t * 1.0 is t, as the numpy lane adds */
        const double ct = sqrt(kk);
        /* power-normalised Fresnel amplitudes, or the coating's */
        const double q1 = c * n1, q2 = ct * n2, r1 = c * n2, r2 = ct * n1;
        const double root = sqrt(q1 * q2) * 2.0;
        const double sum_s = q1 + q2, sum_p = r1 + r2;
        const double g = root / (sum_s * sum_p);  /* one division for both, as _fresnel */
        const double ts = fresnel ? g * sum_p : amp;
        const double tp = fresnel ? g * sum_s : amp;
        /* s = unit(na x d), as _cross_const builds it */
        const double s0 = na1 * d2 - na2 * d1, s1 = na2 * d0 - na0 * d2, s2 = na0 * d1 - na1 * d0;
        /* |na x d|: sqrt(sin2) well off the normal, else from the cross product (far: the caller
         * has checked that every ray is well off the normal) */
        const double norm = far ? sqrt(sin2) : sqrt(pick(sin2 >= fast_sin2, sin2, s0 * s0 + s1 * s1 + s2 * s2));
        const int keep = !far & (norm < degenerate);  /* normal incidence: the basis is kept */
        const double inv = 1.0 / pick(keep, 1.0, norm);
        const double v0 = pick(keep, u0, s0 * inv), v1 = pick(keep, u1, s1 * inv);
        const double v2 = pick(keep, u2, s2 * inv);
        const double cs0 = u0 * v0 + u1 * v1 + u2 * v2;
        const double w0 = (na0 * u0 + na1 * u1 + na2 * u2) * inv;
        const double cs1 = pick(keep, 1.0, cs0), w1 = pick(keep, 0.0, w0);
        const int rescale = !far & !keep & (norm < oblique);  /* near normal: keep the rotation orthonormal */
        double cs = cs1, w = w1;
        if (!far) {  /* (a compile-time choice: no branch in the loop) */
            const double scale = sqrt(pick(rescale, cs1 * cs1 + w1 * w1, 1.0));
            cs = pick(rescale, cs1 / scale, cs1);
            w = pick(rescale, w1 / scale, w1);
        }
        const double av = a0[i], bv = b0[i];
        a0[i] = blend(go, (av * cs - bv * w) * ts, av);
        b0[i] = blend(go, (bv * cs + av * w) * tp, bv);
        if (two) {
            const double aw = a1[i], bw = b1[i];
            a1[i] = blend(go, (aw * cs - bw * w) * ts, aw);
            b1[i] = blend(go, (bw * cs + aw * w) * tp, bw);
        }
        ux[i] = blend(go, v0, u0);
        uy[i] = blend(go, v1, u1);
        uz[i] = blend(go, v2, u2);
        const double gam = c * eta - ct;
        dx[i] = blend(go, d0 * eta + gam * na0, d0);
        dy[i] = blend(go, d1 * eta + gam * na1, d1);
        dz[i] = blend(go, d2 * eta + gam * na2, d2);
    }
    return flagged;
}

#define LANE_ARGS const double *face, const double *optics, const double *ox, const double *oy, \
    const double *oz, double *dx, double *dy, double *dz, double *ux, double *uy, double *uz, \
    double *a0, double *b0, double *a1, double *b1, double *opl, double *hx, double *hy, double *hz, \
    double *cosi, unsigned char *flag, int16_t *rec_p, int16_t *rec_f, int8_t *rec_k
#define LANE_PASS face, optics, ox, oy, oz, dx, dy, dz, ux, uy, uz, a0, b0, a1, b1, opl, hx, hy, hz, \
    cosi, flag, rec_p, rec_f, rec_k

#define LANE_VARIANT(name, two, fresnel, far) \
    LANE_CLONES static ptrdiff_t name(ptrdiff_t n, LANE_ARGS) { return lane(two, fresnel, far, n, LANE_PASS); }
LANE_VARIANT(lane_1f, 0, 1, 0)
LANE_VARIANT(lane_2f, 1, 1, 0)
LANE_VARIANT(lane_1c, 0, 0, 0)
LANE_VARIANT(lane_2c, 1, 0, 0)
LANE_VARIANT(lane_1f_far, 0, 1, 1)
LANE_VARIANT(lane_2f_far, 1, 1, 1)
LANE_VARIANT(lane_1c_far, 0, 0, 1)
LANE_VARIANT(lane_2c_far, 1, 0, 1)

/* 1 when every ray meets the face with sin^2(incidence) >= fast_sin2 (or is not a number). */
LANE_CLONES
static int all_far(ptrdiff_t n, const double *face, const double *optics, const double *restrict dx,
                   const double *restrict dy, const double *restrict dz)
{
    const double nv0 = face[0], nv1 = face[1], nv2 = face[2], fast_sin2 = optics[6];
    int near = 0;
    for (ptrdiff_t i = 0; i < n; i++) {
        const double dn = nv0 * dx[i] + nv1 * dy[i] + nv2 * dz[i];
        near |= (1.0 - dn * dn) < fast_sin2;
    }
    return !near;
}

/* face: nx ny nz offset | ex ey ez lo_e hi_e | hx hy hz lo_h hi_h                (14 values)
 * optics: entering n1 n2 eta amp eps fast_sin2 oblique degenerate prism face kind (12 values)
 *         (amp < 0: uncoated, Fresnel amplitudes; else both amplitudes = amp; prism, face and
 *         event kind go to the record rows rec_p, rec_f, rec_k of every ray)
 * o, d, u, hit: three rows each, at base + k * stride (k = 0, 1, 2; strides in doubles).
 * o is read; d, u, the Jones pairs and opl are updated in place for the rays that are done and
 * left as they were for flagged rays; hit, cosi, flag and the record rows are written for every
 * ray. pairs: 1 or 2 real Jones pairs (with 1, the second pair's pointers are not used).
 * Returns the number of flagged rays. */
ptrdiff_t prismfab_lane_refract(
    ptrdiff_t n, int pairs, const double *face, const double *optics,
    const double *o, ptrdiff_t so, double *d, ptrdiff_t sd, double *u, ptrdiff_t su,
    double *a0, double *b0, double *a1, double *b1, double *opl,
    double *hit, ptrdiff_t sh, double *cosi, unsigned char *flag, int16_t *rec_p, int16_t *rec_f,
    int8_t *rec_k)
{
    const double *ox = o, *oy = o + so, *oz = o + 2 * so;
    double *dx = d, *dy = d + sd, *dz = d + 2 * sd, *ux = u, *uy = u + su, *uz = u + 2 * su;
    double *hx = hit, *hy = hit + sh, *hz = hit + 2 * sh;
    const int fresnel = optics[4] < 0.0;  /* uncoated: Fresnel amplitudes */
    if (all_far(n, face, optics, dx, dy, dz)) {
        if (fresnel)
            return pairs == 2 ? lane_2f_far(n, LANE_PASS) : lane_1f_far(n, LANE_PASS);
        return pairs == 2 ? lane_2c_far(n, LANE_PASS) : lane_1c_far(n, LANE_PASS);
    }
    if (fresnel)
        return pairs == 2 ? lane_2f(n, LANE_PASS) : lane_1f(n, LANE_PASS);
    return pairs == 2 ? lane_2c(n, LANE_PASS) : lane_1c(n, LANE_PASS);
}

/* Start of a chunk with real (linear) fields: bundle rows (n x 3, row-major) of origins,
 * directions and complex fields (n x 3 complex, interleaved re, im) to component rows o, d, the
 * basis u = e / |e| and the Jones pair (|e|, 0), as Rays.start and _linear_start do. Returns 0,
 * or 1 when a field has an imaginary part (any bit set) or is zero: then u and a are not valid
 * and the caller takes the general path. */
LANE_CLONES
static int start_pass(ptrdiff_t n, const double *restrict org, const double *restrict dir,
                      const double *restrict fld, double *restrict o, ptrdiff_t so,
                      double *restrict d, ptrdiff_t sd, double *restrict u, ptrdiff_t su,
                      double *restrict a, double *restrict b)
{
    int bad = 0;
    for (ptrdiff_t i = 0; i < n; i++) {
        o[i] = org[3 * i]; o[so + i] = org[3 * i + 1]; o[2 * so + i] = org[3 * i + 2];
        d[i] = dir[3 * i]; d[sd + i] = dir[3 * i + 1]; d[2 * sd + i] = dir[3 * i + 2];
        const double e0 = fld[6 * i], e1 = fld[6 * i + 2], e2 = fld[6 * i + 4];
        uint64_t i0, i1, i2;  /* any bit of an imaginary part (-0.0 too), as _has_phase tests */
        memcpy(&i0, fld + 6 * i + 1, 8);
        memcpy(&i1, fld + 6 * i + 3, 8);
        memcpy(&i2, fld + 6 * i + 5, 8);
        const double s = sqrt(e0 * e0 + e1 * e1 + e2 * e2);
        bad |= ((i0 | i1 | i2) != 0) | !(s > 0.0);
        u[i] = e0 / s; u[su + i] = e1 / s; u[2 * su + i] = e2 / s;
        a[i] = s;
        b[i] = 0.0;
    }
    return bad;
}

int prismfab_lane_start(ptrdiff_t n, const double *org, const double *dir, const double *fld,
                        double *o, ptrdiff_t so, double *d, ptrdiff_t sd, double *u, ptrdiff_t su,
                        double *a, double *b)
{
    return start_pass(n, org, dir, fld, o, so, d, sd, u, su, a, b);
}

/* Final state of rays with one real Jones pair, as Rays.finish / _finish_linear write it:
 * points, directions, path, power a a + b b and field a u + b (d x u) (complex output rows,
 * interleaved, imaginary part 0). Row blocks at base + k * stride; output strides in elements. */
LANE_CLONES
static void finish_pass(ptrdiff_t n, const double *restrict o, ptrdiff_t so, const double *restrict d,
                        ptrdiff_t sd, const double *restrict u, ptrdiff_t su, const double *restrict a,
                        const double *restrict b, const double *restrict opl,
                        double *restrict O, ptrdiff_t sO, double *restrict Dd, ptrdiff_t sDd,
                        double *restrict Opl, double *restrict P, double *restrict F, ptrdiff_t sF)
{
    for (ptrdiff_t i = 0; i < n; i++) {
        const double d0 = d[i], d1 = d[sd + i], d2 = d[2 * sd + i];
        const double u0 = u[i], u1 = u[su + i], u2 = u[2 * su + i];
        const double av = a[i], bv = b[i];
        O[i] = o[i]; O[sO + i] = o[so + i]; O[2 * sO + i] = o[2 * so + i];
        Dd[i] = d0; Dd[sDd + i] = d1; Dd[2 * sDd + i] = d2;
        Opl[i] = opl[i];
        P[i] = av * av + bv * bv;
        F[2 * i] = av * u0 + (d1 * u2 - d2 * u1) * bv;
        F[2 * i + 1] = 0.0;
        F[2 * (sF + i)] = av * u1 + (d2 * u0 - d0 * u2) * bv;
        F[2 * (sF + i) + 1] = 0.0;
        F[2 * (2 * sF + i)] = av * u2 + (d0 * u1 - d1 * u0) * bv;
        F[2 * (2 * sF + i) + 1] = 0.0;
    }
}

void prismfab_lane_finish(ptrdiff_t n, const double *o, ptrdiff_t so, const double *d, ptrdiff_t sd,
                          const double *u, ptrdiff_t su, const double *a, const double *b,
                          const double *opl, double *O, ptrdiff_t sO, double *Dd, ptrdiff_t sDd,
                          double *Opl, double *P, double *F, ptrdiff_t sF)
{
    finish_pass(n, o, so, d, sd, u, su, a, b, opl, O, sO, Dd, sDd, Opl, P, F, sF);
}

/* Component ranges of rows o and d (3 rows each at base + k * stride) in one pass:
 * out = o_lo[3], o_hi[3], d_lo[3], d_hi[3]. Returns 1 when a value is not a number. */
LANE_CLONES
static int box_pass(ptrdiff_t n, const double *restrict o, ptrdiff_t so, const double *restrict d,
                    ptrdiff_t sd, double *restrict out)
{
    int bad = 0;
    for (int k = 0; k < 3; k++) {
        const double *x = o + k * so, *y = d + k * sd;
        double xl = INFINITY, xh = -INFINITY, yl = INFINITY, yh = -INFINITY;
        for (ptrdiff_t i = 0; i < n; i++) {
            const double a = x[i], b = y[i];
            xl = a < xl ? a : xl;
            xh = a > xh ? a : xh;
            yl = b < yl ? b : yl;
            yh = b > yh ? b : yh;
            bad |= (a != a) | (b != b);
        }
        out[k] = xl; out[3 + k] = xh; out[6 + k] = yl; out[9 + k] = yh;
    }
    return bad;
}

int prismfab_lane_box(ptrdiff_t n, const double *o, ptrdiff_t so, const double *d, ptrdiff_t sd, double *out)
{
    return box_pass(n, o, so, d, sd, out);
}
