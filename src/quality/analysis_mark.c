/* Precision of each mark from the selected inverse: standard deviations,
 * the absolute error ellipse of the plane block, the interval of the
 * height, the covariance block and, with e, n and h all unknowns, the
 * principal axes of the 3×3 block (DESIGN.md "Precision"). Qxx comes with
 * a priori σ0 = 1; the variance factor (1, or σ0² a posteriori with
 * --scale-by-aposteriori) multiplies it. */
#include <math.h>

#include "analysis_int.h"

/* Q(i, j) times the variance factor; 0 for a component that is not an
 * unknown (held, or fixed by the free datum: no variance), NAN when the
 * entry is not in the selected inverse. */
static double q(const cairn_selinv *Z, int i, int j, double vf)
{
    double x;
    if (i < 0 || j < 0)
        return 0.0;
    return cairn_selinv_get(Z, i, j, &x) == 0 ? x * vf : NAN;
}

void cairn_qa_marks(cairn_analysis *an, const cairn_selinv *Z)
{
    const cairn_adjustment *adj = an->adj;
    double vf = an->variance_factor;
    for (size_t m = 0; m < adj->net->nmarks; m++) {
        const int *u = &adj->unk_mark[3 * m];
        unsigned t = adj->in_adj[m];
        double *c = &an->cov[6 * m];
        int ue = (t & CAIRN_E) ? u[0] : -1, un = (t & CAIRN_N) ? u[1] : -1;
        int uh = (t & CAIRN_H) ? u[2] : -1;
        /* covariance block: ee en eh nn nh hh, NAN where absent */
        int idx[3] = {ue, un, uh};
        int pos[3][3] = {{0, 1, 2}, {1, 3, 4}, {2, 4, 5}};
        for (int a = 0; a < 3; a++)
            for (int b = a; b < 3; b++)
                c[pos[a][b]] = idx[a] >= 0 && idx[b] >= 0 ? q(Z, idx[a], idx[b], vf) : NAN;
        if (ue >= 0)
            an->sd_e[m] = sqrt(c[0]);
        if (un >= 0)
            an->sd_n[m] = sqrt(c[3]);
        if (uh >= 0) {
            an->sd_h[m] = sqrt(c[5]);
            an->h_interval[m] = an->k1 * an->sd_h[m];
        }
        if (ue >= 0 || un >= 0) {
            /* a component fixed by the free datum counts with variance 0,
             * so the ellipse degenerates to a segment */
            cairn_ellipse el;
            if (cairn_ellipse2(q(Z, ue, ue, vf), q(Z, ue, un, vf), q(Z, un, un, vf), an->k2,
                               &el) == 0) {
                an->major[m] = el.a;
                an->minor[m] = el.b;
                an->azimuth[m] = el.azimuth;
            }
        }
        if (ue >= 0 && un >= 0 && uh >= 0 && an->axes3) {
            double b[9] = {c[0], c[1], c[2], c[1], c[3], c[4], c[2], c[4], c[5]};
            double ax[3], dir[9];
            if (cairn_ellipsoid3(b, an->k3, ax, dir) == 0) {
                for (int k = 0; k < 3; k++)
                    an->axes3[3 * m + (size_t)k] = ax[k];
                for (int k = 0; k < 9; k++)
                    an->dirs3[9 * m + (size_t)k] = dir[k];
            }
        }
    }
}
