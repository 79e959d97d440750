/* Compiled path of the charge-neutrality solve of freezeout.physics.neutrality.solve_levels.
 *
 * The same equation, expansions and iteration as the numpy path, one element at a time:
 *
 *   residual  ln(p + sum N_D+ + N_D,fixed) - ln(n + sum N_A- + N_A,fixed)  in u = (E_F - E_v)/kT,
 *   n, p      N_c F_1/2, N_v F_1/2 (or Boltzmann), F_1/2 from the series / Chebyshev tables /
 *             Sommerfeld expansion of freezeout.physics.fermi (tables handed over by
 *             set_tables, so both paths read the same coefficients),
 *   iteration Newton inside a bracket, the step-length test from iteration 20, bisection only
 *             after iteration 40 (freezeout.physics.safeguarded_newton, W. H. Press et al.,
 *             Numerical Recipes, 3rd ed., Sec. 9.4).
 *
 * The numpy path evaluates every element of a batch until the last one has converged; here
 * each element stops on its own, which is where the time goes in a fit's batched solves.
 *
 * solve(rows, out, n_donors, n_acceptors, fermi_dirac, tolerance, warm) -> iterations
 *   rows: float64, contiguous, (6 + 2 n_donors + 2 n_acceptors) rows of n elements:
 *         ln N_c, ln N_v, E_g/kT, ln N_D,fixed (-inf: none), ln N_A,fixed, start u,
 *         then ln N and offset of each donor, then of each acceptor (as in level_terms);
 *   out:  float64, contiguous, (3 + n_donors + n_acceptors) rows of n elements, written:
 *         u, ln p, ln n, ln(ionized fraction) of each donor, then of each acceptor.
 *   warm: 1 = the start is a previous solution, first evaluated where it stands;
 *         0 = a cold start, clipped into the bracket first.
 * Raises RuntimeError when the residual is not finite at some element; ValueError on buffers
 * that are not native aligned float64 of those lengths. */
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#define N_CHEB 16
#define N_ASYMPTOTIC 12
#define SERIES_MAX -2.0
#define ASYMPTOTIC_MIN 26.0
#define SERIES_EXACT -39.2 /* one term of the series is exact to 1e-17 below this */
#define MAX_SERIES_TERMS 24
#define NEWTON_ITERATIONS 40
#define STEP_TEST_FROM 20
#define EXACT_RESIDUAL 1e-13
#define FAR_START 1e6
#define MAX_LEVELS 4096 /* of each kind: far above any model, and no index overflows */

static double *cheb_half = NULL, *cheb_minus = NULL; /* [interval][order] */
static Py_ssize_t n_intervals = 0;
static double cheb_lower = 0.0, cheb_width = 1.0;
static double asym_half[N_ASYMPTOTIC], asym_minus[N_ASYMPTOTIC];
static double gammaln_half, gammaln_minus; /* ln Gamma(j + 2) for j = 1/2, -1/2 */
static double series_half[MAX_SERIES_TERMS + 1], series_minus[MAX_SERIES_TERMS + 1];

static double clenshaw(const double *c, double x)
{
    double two_x = 2.0 * x, b1 = c[N_CHEB - 1], b2 = 0.0, t;
    for (int m = N_CHEB - 2; m > 0; m--) {
        t = b1;
        b1 = two_x * b1 - b2 + c[m];
        b2 = t;
    }
    return x * b1 - b2 + c[0];
}

static double log_asymptotic(const double *a, double gammaln, double j, double eta)
{
    double inv2 = 1.0 / (eta * eta), total = 0.0;
    for (int k = N_ASYMPTOTIC - 1; k >= 0; k--)
        total = (total + a[k]) * inv2;
    return (j + 1.0) * log(eta) - gammaln + log1p(total);
}

/* ln F_1/2(eta) and F_-1/2 / F_1/2, as freezeout.physics.fermi.log_fermi_dirac_half_ratio */
static void log_band(double eta, int fermi_dirac, double *lf, double *ratio)
{
    if (!fermi_dirac || eta <= SERIES_EXACT) {
        *lf = eta;
        *ratio = 1.0;
    } else if (eta < SERIES_MAX) {
        int n_terms = (int)ceil(-SERIES_EXACT / -eta);
        if (n_terms > MAX_SERIES_TERMS)
            n_terms = MAX_SERIES_TERMS;
        double x = exp(eta), power = 1.0, s_half = 1.0, s_minus = 1.0;
        for (int k = 2; k <= n_terms; k++) {
            power *= x;
            s_half += series_half[k] * power;
            s_minus += series_minus[k] * power;
        }
        *lf = eta + log(s_half);
        *ratio = s_minus / s_half;
    } else if (eta < ASYMPTOTIC_MIN) {
        double pos = (eta - cheb_lower) / cheb_width;
        Py_ssize_t idx = (Py_ssize_t)pos;
        if (idx > n_intervals - 1)
            idx = n_intervals - 1;
        if (idx < 0)
            idx = 0;
        double x = 2.0 * (pos - (double)idx) - 1.0;
        double lh = clenshaw(cheb_half + idx * N_CHEB, x);
        *lf = lh;
        *ratio = exp(clenshaw(cheb_minus + idx * N_CHEB, x) - lh);
    } else {
        double lh = log_asymptotic(asym_half, gammaln_half, 0.5, eta);
        *lf = lh;
        *ratio = exp(log_asymptotic(asym_minus, gammaln_minus, -0.5, eta) - lh);
    }
}

typedef struct {
    Py_ssize_t n, i;
    int nd, na, fd;
    const double *rows;
    double *out;
} Solve;

#define ROW(s, r) ((s)->rows[(Py_ssize_t)(r) * (s)->n + (s)->i])
#define OUT(s, r) ((s)->out[(Py_ssize_t)(r) * (s)->n + (s)->i])

/* One side of the balance: ln(band + sum_k N_k f_k + fixed) and its slope in u.
 *
 * f_k = 1 / (1 + e^x_k) is a level's ionized fraction, x_k = offset + sign u. The sum is
 * taken relative to m, within ln 2 of its largest term (ln N_k f_k lies between
 * ln N_k - max(x_k, 0) - ln 2 and ln N_k - max(x_k, 0)), so no term overflows and the sum
 * does not underflow; the numpy path builds the same sum with logaddexp. A level's slope
 * d(N f)/du is -N f (1 - f) for a donor (x rises with u), +N f (1 - f) for an acceptor. */
static void side(const Solve *s, double u, double band, double band_slope, double fixed,
                 int first, int count, double sign, double *total, double *slope)
{
    const int offsets = first + count;
    double m = band > fixed ? band : fixed;
    for (int k = 0; k < count; k++) {
        double x = ROW(s, offsets + k) + sign * u;
        double t = ROW(s, first + k) - (x > 0.0 ? x : 0.0);
        if (t > m)
            m = t;
    }
    double wb = exp(band - m), sum = wb + exp(fixed - m), moment = band_slope * wb;
    for (int k = 0; k < count; k++) {
        double x = ROW(s, offsets + k) + sign * u;
        double ex = exp(-fabs(x)), inv = 1.0 / (1.0 + ex);
        double w = exp(ROW(s, first + k) - (x > 0.0 ? x : 0.0) - m) * inv; /* N f / e^m */
        double neutral = x > 0.0 ? inv : ex * inv;                            /* 1 - f */
        sum += w;
        moment -= sign * w * neutral;
    }
    *total = m + log(sum);
    *slope = moment / sum;
}

/* The residual and its slope at u, and ln p, ln n there. */
static void residual(const Solve *s, double u, double *h, double *slope, double *lp, double *ln)
{
    double dlp, dln, pos, neg, s_pos, s_neg;
    log_band(-u, s->fd, lp, &dlp);
    *lp += ROW(s, 1);
    log_band(u - ROW(s, 2), s->fd, ln, &dln);
    *ln += ROW(s, 0);
    side(s, u, *lp, -dlp, ROW(s, 3), 6, s->nd, 1.0, &pos, &s_pos);
    side(s, u, *ln, dln, ROW(s, 4), 6 + 2 * s->nd, s->na, -1.0, &neg, &s_neg);
    *h = pos - neg;
    *slope = s_pos - s_neg;
}

/* ln(1 / (1 + e^x)) of a level, as scipy.special.log_expit(-x) */
static double log_ionized(double x)
{
    return x > 0.0 ? -x - log1p(exp(-x)) : -log1p(exp(x));
}

/* Writes the solution at u (ln p, ln n from its last evaluation) to out. */
static void write_out(const Solve *s, double u, double lp, double ln)
{
    OUT(s, 0) = u;
    OUT(s, 1) = lp;
    OUT(s, 2) = ln;
    for (int k = 0; k < s->nd; k++)
        OUT(s, 3 + k) = log_ionized(ROW(s, 6 + s->nd + k) + u);
    for (int k = 0; k < s->na; k++)
        OUT(s, 3 + s->nd + k) = log_ionized(ROW(s, 6 + 2 * s->nd + s->na + k) - u);
}

/* (lo, hi) where the residual changes sign, as neutrality_terms.fermi_bracket */
static void bracket(const Solve *s, double *lo, double *hi)
{
    double total = exp(ROW(s, 3)) + exp(ROW(s, 4));
    for (int k = 0; k < s->nd; k++)
        total += exp(ROW(s, 6 + k));
    for (int k = 0; k < s->na; k++)
        total += exp(ROW(s, 6 + 2 * s->nd + k));
    if (total < 1.0)
        total = 1.0;
    double m_v = fmax(total / exp(ROW(s, 1)), 1.0), m_c = fmax(total / exp(ROW(s, 0)), 1.0);
    *lo = -(log(m_v) + 2.0 * cbrt(m_v * m_v) + 10.0);
    *hi = ROW(s, 2) + log(m_c) + 2.0 * cbrt(m_c * m_c) + 10.0;
}

static double resolution(double magnitude, double tolerance)
{
    double ulp8 = 8.0 * (nextafter(magnitude, INFINITY) - magnitude);
    return ulp8 > tolerance ? ulp8 : tolerance;
}

static int converged(double h, double slope, double u, double tolerance)
{
    return fabs(h) <= fmax(-slope * resolution(fabs(u), tolerance), EXACT_RESIDUAL);
}

static double clip(double u, double lo, double hi)
{
    return u < lo ? lo : (u > hi ? hi : u);
}

/* One element, as safeguarded_newton.solve_decreasing; its iterations, or -1 (not finite). */
static int solve_one(const Solve *s, double tolerance, int warm)
{
    double u = ROW(s, 5), h = 0.0, slope = 0.0, lp = 0.0, ln = 0.0, lo, hi;
    int extra = 0, pending = 0;
    if (warm && fabs(u) < FAR_START) {
        residual(s, u, &h, &slope, &lp, &ln);
        if (converged(h, slope, u, tolerance)) {
            write_out(s, u, lp, ln);
            return 1;
        }
        bracket(s, &lo, &hi);
        double inside = clip(u, lo, hi);
        if (inside != u) {
            u = inside;
            extra = 1;
        } else {
            pending = 1;
        }
    } else {
        bracket(s, &lo, &hi);
        u = clip(u, lo, hi);
    }
    double width = hi - lo, step = 0.0, step_before = 0.0;
    int iterations = extra;
    for (;;) {
        iterations++;
        if (!pending)
            residual(s, u, &h, &slope, &lp, &ln);
        pending = 0;
        double newton = slope < 0.0 ? -(h / slope) : INFINITY;
        int done = converged(h, slope, u, tolerance);
        int k = iterations - extra, late = k >= STEP_TEST_FROM;
        if (late) {
            if (h > 0.0)
                lo = u;
            if (h < 0.0)
                hi = u;
            done |= hi - lo <= resolution(fmax(fabs(lo), fabs(hi)), tolerance);
        }
        if (done) {
            write_out(s, u, lp, ln);
            return iterations;
        }
        if (!isfinite(h))
            return -1;
        if (!late) {
            if (h > 0.0)
                lo = u;
            if (h < 0.0)
                hi = u;
        }
        double next;
        if (k >= NEWTON_ITERATIONS) {
            int halvings = width > 0.0 ? (int)ceil(log2(width / tolerance)) : 0;
            if (k >= NEWTON_ITERATIONS + (halvings > 0 ? halvings : 0) + 2)
                return -2; /* unreachable: the cap bounds the bisections needed */
            next = 0.5 * (lo + hi);
        } else {
            next = u + newton;
            int take = next > lo && next < hi;
            if (late)
                take = take && fabs(newton) <= 0.5 * fabs(step_before);
            if (!take)
                next = 0.5 * (lo + hi);
            if (k >= STEP_TEST_FROM - 2) {
                step_before = step;
                step = next - u;
            }
        }
        u = next;
    }
}

/* The buffer of obj, when it is native, aligned, C-contiguous float64 (writable if asked). */
static int get_doubles(PyObject *obj, Py_buffer *b, int writable, const char *what)
{
    if (PyObject_GetBuffer(obj, b, PyBUF_C_CONTIGUOUS | PyBUF_FORMAT
                           | (writable ? PyBUF_WRITABLE : 0)) < 0)
        return 0;
    const char *f = b->format ? b->format : "B";
    if (*f == '@' || *f == '=' || (*f == '<' && PY_LITTLE_ENDIAN) || (*f == '>' && PY_BIG_ENDIAN))
        f++;
    if (strcmp(f, "d") != 0 || b->itemsize != (Py_ssize_t)sizeof(double)
        || (uintptr_t)b->buf % _Alignof(double) != 0) {
        PyErr_Format(PyExc_ValueError, "%s: expected native, aligned float64 values", what);
        PyBuffer_Release(b);
        return 0;
    }
    return 1;
}

static int has_length(Py_buffer *b, Py_ssize_t count, const char *what)
{
    if (b->len != count * (Py_ssize_t)sizeof(double)) {
        PyErr_Format(PyExc_ValueError, "%s: expected %zd float64 values", what, count);
        return 0;
    }
    return 1;
}

static PyObject *solve(PyObject *self, PyObject *args)
{
    Py_buffer rows, out;
    PyObject *rows_obj, *out_obj;
    int nd, na, fd, warm;
    double tolerance;
    if (!PyArg_ParseTuple(args, "OOiipdp", &rows_obj, &out_obj, &nd, &na, &fd, &tolerance,
                          &warm))
        return NULL;
    if (nd < 0 || na < 0 || nd > MAX_LEVELS || na > MAX_LEVELS) {
        PyErr_Format(PyExc_ValueError, "level counts must lie in 0..%d", MAX_LEVELS);
        return NULL;
    }
    if (!(tolerance > 0.0 && isfinite(tolerance)))
        return PyErr_SetString(PyExc_ValueError, "tolerance must be positive and finite"), NULL;
    if (cheb_half == NULL)
        return PyErr_SetString(PyExc_RuntimeError, "set_tables was not called"), NULL;
    if (!get_doubles(rows_obj, &rows, 0, "rows"))
        return NULL;
    if (!get_doubles(out_obj, &out, 1, "out"))
        return PyBuffer_Release(&rows), NULL;
    PyObject *result = NULL;
    Py_ssize_t n_out = 3 + (Py_ssize_t)nd + na;
    Py_ssize_t n = out.len / (Py_ssize_t)sizeof(double) / n_out;
    if (!has_length(&out, n_out * n, "out")
        || !has_length(&rows, (6 + 2 * ((Py_ssize_t)nd + na)) * n, "rows"))
        goto done;
    Solve s = {n, 0, nd, na, fd, (const double *)rows.buf, (double *)out.buf};
    int most = 0, failed = 0;
    Py_BEGIN_ALLOW_THREADS
    for (Py_ssize_t i = 0; i < n; i++) {
        s.i = i;
        int it = solve_one(&s, tolerance, warm);
        if (it < 0) {
            failed = it;
            break;
        }
        if (it > most)
            most = it;
    }
    Py_END_ALLOW_THREADS
    if (failed == -1)
        PyErr_SetString(PyExc_RuntimeError, "charge-neutrality residual is not finite");
    else if (failed)
        PyErr_SetString(PyExc_RuntimeError, "root of the charge-neutrality residual not found");
    else
        result = PyLong_FromLong(most);
done:
    PyBuffer_Release(&rows);
    PyBuffer_Release(&out);
    return result;
}

static PyObject *set_tables(PyObject *self, PyObject *args)
{
    Py_buffer half, minus, a_half, a_minus;
    PyObject *objs[4];
    double lower, width, gl_half, gl_minus;
    if (!PyArg_ParseTuple(args, "OOddOOdd", &objs[0], &objs[1], &lower, &width, &objs[2],
                          &objs[3], &gl_half, &gl_minus))
        return NULL;
    if (cheb_half != NULL) /* set once: the tables are constants, and a solve in another */
        return Py_NewRef(Py_None); /* thread (which runs without the GIL) may read them */
    Py_buffer *bufs[4] = {&half, &minus, &a_half, &a_minus};
    const char *names[4] = {"half", "minus", "asymptotic half", "asymptotic minus"};
    for (int k = 0; k < 4; k++) {
        if (!get_doubles(objs[k], bufs[k], 0, names[k])) {
            while (k-- > 0)
                PyBuffer_Release(bufs[k]);
            return NULL;
        }
    }
    PyObject *result = NULL;
    Py_ssize_t count = half.len / (Py_ssize_t)sizeof(double);
    if (count == 0 || count % N_CHEB) {
        PyErr_Format(PyExc_ValueError, "half: expected a positive multiple of %d values", N_CHEB);
        goto done;
    }
    if (!has_length(&minus, count, "minus")
        || !has_length(&a_half, N_ASYMPTOTIC, "asymptotic half")
        || !has_length(&a_minus, N_ASYMPTOTIC, "asymptotic minus"))
        goto done;
    /* the tables must cover the span between the series and the asymptotic expansion */
    if (!(lower == SERIES_MAX && width > 0.0 && isfinite(width)
          && lower + (double)(count / N_CHEB) * width >= ASYMPTOTIC_MIN)) {
        PyErr_SetString(PyExc_ValueError, "the Chebyshev tables do not cover [-2, 26]");
        goto done;
    }
    double *h = malloc(count * sizeof(double)), *m = malloc(count * sizeof(double));
    if (h == NULL || m == NULL) {
        free(h);
        free(m);
        PyErr_NoMemory();
        goto done;
    }
    memcpy(h, half.buf, count * sizeof(double));
    memcpy(m, minus.buf, count * sizeof(double));
    cheb_half = h;
    cheb_minus = m;
    n_intervals = count / N_CHEB;
    cheb_lower = lower;
    cheb_width = width;
    memcpy(asym_half, a_half.buf, sizeof asym_half);
    memcpy(asym_minus, a_minus.buf, sizeof asym_minus);
    gammaln_half = gl_half;
    gammaln_minus = gl_minus;
    /* series coefficients (-1)^(k+1) / k^(j+1) of F_1/2 and F_-1/2 [DLMF 25.12(iii)] */
    for (int k = 2; k <= MAX_SERIES_TERMS; k++) {
        double sign = k % 2 == 0 ? -1.0 : 1.0;
        series_half[k] = sign / pow((double)k, 1.5);
        series_minus[k] = sign / pow((double)k, 0.5);
    }
    result = Py_NewRef(Py_None);
done:
    PyBuffer_Release(&half);
    PyBuffer_Release(&minus);
    PyBuffer_Release(&a_half);
    PyBuffer_Release(&a_minus);
    return result;
}

static PyMethodDef methods[] = {
    {"solve", solve, METH_VARARGS, "Solve charge neutrality element by element (see the module)."},
    {"set_tables", set_tables, METH_VARARGS,
     "Hand over the Fermi-Dirac expansion tables (once; later calls change nothing)."},
    {NULL, NULL, 0, NULL},
};

static struct PyModuleDef module = {
    PyModuleDef_HEAD_INIT, "_neutrality_kernel",
    "Compiled charge-neutrality solve (see freezeout.physics.neutrality_kernel).", -1, methods,
};

PyMODINIT_FUNC PyInit__neutrality_kernel(void)
{
    return PyModule_Create(&module);
}
