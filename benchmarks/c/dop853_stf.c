/* Plain C reference for benchmarks/bench_steps.py: the DOP853 loop flowkit's kernels run,
 * on the stretch-twist-fold flow, counting upward crossings of y = 0.
 *
 * Same tableau (dop853_tableau.h is written by the benchmark from flowkit's own table),
 * same error norm (embedded 5th and 3rd order estimates combined as in Solving ODEs I,
 * Springer 1993, section II.10), same step control (safety 0.9, factors in [0.2, 10],
 * exponent -1/8), same initial step (section II.4), first-same-as-last. No dense output
 * and no crossing location: a crossing is counted when y changes sign over an accepted
 * step, so this is the cost floor of the stepping itself.
 *
 * Compiled with -DNCOL=k the state also carries k tangent vectors v (dv/dt = (grad u) v, the
 * columns of the identity at the start), N = 3 + 3k components, all in the error norm: the loop
 * flowkit runs for 6 (k = 1) and 12 (k = 3) components.
 *
 * usage: dop853_stf CROSSINGS ROTATION RTOL ATOL [T_END]   -> prints attempts accepted crossings seconds t
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "dop853_tableau.h"   /* A[16][16], B[12], C[16], E5[13], E3[13] */

#ifndef NCOL
#define NCOL 0
#endif
#define N (3 + 3 * NCOL)

static double rot;

static inline void f(double t, const double *y, double *dy) {
    (void)t;
    double x = y[0], yy = y[1], z = y[2];
    dy[0] = rot * z - 8.0 * x * yy;
    dy[1] = 11.0 * x * x + 3.0 * yy * yy + z * z - 3.0;
    dy[2] = -rot * x + 2.0 * yy * z;
#if NCOL > 0
    /* gradient, row-major g[i][j] = du_i/dx_j */
    double g0 = -8.0 * yy, g1 = -8.0 * x, g2 = rot, g3 = 22.0 * x, g4 = 6.0 * yy, g5 = 2.0 * z;
    double g6 = -rot, g7 = 2.0 * z, g8 = 2.0 * yy;
    for (int c = 0; c < NCOL; c++) {
        const double *v = y + 3 + 3 * c;
        double *dv = dy + 3 + 3 * c;
        dv[0] = g0 * v[0] + g1 * v[1] + g2 * v[2];
        dv[1] = g3 * v[0] + g4 * v[1] + g5 * v[2];
        dv[2] = g6 * v[0] + g7 * v[1] + g8 * v[2];
    }
#endif
}

static double K[13][N];

/* one attempt of size h from (t, y) with K[0] = f(t, y); candidate into ynew; returns the error norm */
static double attempt(double t, const double *y, double h, double rtol, double atol, double *ynew) {
    double tmp[N];
    for (int s = 1; s < 12; s++) {
        for (int i = 0; i < N; i++) {
            double acc = 0.0;
            for (int j = 0; j < s; j++) acc += A[s][j] * K[j][i];
            tmp[i] = y[i] + h * acc;
        }
        f(t + C[s] * h, tmp, K[s]);
    }
    for (int i = 0; i < N; i++) {
        double acc = 0.0;
        for (int j = 0; j < 12; j++) acc += B[j] * K[j][i];
        ynew[i] = y[i] + h * acc;
    }
    f(t + h, ynew, K[12]);
    double e5 = 0.0, e3 = 0.0;
    for (int i = 0; i < N; i++) {
        double sc = atol + rtol * fmax(fabs(y[i]), fabs(ynew[i]));
        double a5 = 0.0, a3 = 0.0;
        for (int j = 0; j < 13; j++) { a5 += E5[j] * K[j][i]; a3 += E3[j] * K[j][i]; }
        e5 += (a5 / sc) * (a5 / sc);
        e3 += (a3 / sc) * (a3 / sc);
    }
    if (e5 == 0.0 && e3 == 0.0) return 0.0;
    return fabs(h) * e5 / sqrt((e5 + 0.01 * e3) * N);
}

static double initial_step(double t, const double *y, double rtol, double atol) {
    double d0 = 0, d1 = 0, d2 = 0, tmp[N], f1[N];
    for (int i = 0; i < N; i++) {
        double sc = atol + fabs(y[i]) * rtol;
        d0 += (y[i] / sc) * (y[i] / sc);
        d1 += (K[0][i] / sc) * (K[0][i] / sc);
    }
    d0 = sqrt(d0 / N); d1 = sqrt(d1 / N);
    double h0 = (d0 < 1e-5 || d1 < 1e-5) ? 1e-6 : 0.01 * d0 / d1;
    for (int i = 0; i < N; i++) tmp[i] = y[i] + h0 * K[0][i];
    f(t + h0, tmp, f1);
    for (int i = 0; i < N; i++) {
        double sc = atol + fabs(y[i]) * rtol;
        d2 += ((f1[i] - K[0][i]) / sc) * ((f1[i] - K[0][i]) / sc);
    }
    d2 = sqrt(d2 / N) / h0;
    double h1 = (d1 <= 1e-15 && d2 <= 1e-15) ? fmax(1e-6, h0 * 1e-3) : pow(0.01 / fmax(d1, d2), 1.0 / 8.0);
    return fmin(100 * h0, h1);
}

int main(int argc, char **argv) {
    long want = argc > 1 ? atol(argv[1]) : 40000;
    rot = argc > 2 ? atof(argv[2]) : 0.1;
    double rtol = argc > 3 ? atof(argv[3]) : 1e-10, atl = argc > 4 ? atof(argv[4]) : 1e-12;
    double tend = argc > 5 ? atof(argv[5]) : INFINITY;
    double y[N] = {0.1, 0.0, 0.3}, ynew[N], t = 0.0;
    for (int c = 0; c < NCOL; c++) y[3 + 3 * c + c] = 1.0;
    struct timespec a, b;
    clock_gettime(CLOCK_MONOTONIC, &a);
    f(t, y, K[0]);
    double h = initial_step(t, y, rtol, atl);
    long attempts = 0, accepted = 0, crossings = 0;
    while (crossings < want && t < tend) {
        double err = attempt(t, y, h, rtol, atl, ynew);
        attempts++;
        if (err <= 1.0) {
            double fac = err == 0.0 ? 10.0 : fmin(10.0, 0.9 * pow(err, -1.0 / 8.0));
            if (y[1] < 0.0 && ynew[1] >= 0.0) crossings++;
            for (int i = 0; i < N; i++) { y[i] = ynew[i]; K[0][i] = K[12][i]; }
            t += h;
            h *= fac;
            accepted++;
        } else {
            h *= fmax(0.2, 0.9 * pow(err, -1.0 / 8.0));
        }
    }
    clock_gettime(CLOCK_MONOTONIC, &b);
    double secs = (b.tv_sec - a.tv_sec) + 1e-9 * (b.tv_nsec - a.tv_nsec);
    printf("%ld %ld %ld %.9f %.17g\n", attempts, accepted, crossings, secs, t);
    return 0;
}
