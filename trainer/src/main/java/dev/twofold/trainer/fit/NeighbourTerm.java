package dev.twofold.trainer.fit;

import dev.twofold.trainer.data.TrustGraph;

/**
 * The neighbour regulariser of SocialMF (M. Jamali, M. Ester, <i>A Matrix Factorization Technique
 * with Trust Propagation for Recommendation in Social Networks</i>, RecSys 2010):
 *
 * <pre>
 *   β Σ_{u ∈ U_T} ‖d_u‖²,   d_u = p_u − Σ_{v ∈ N(u)} w̄_uv p_v,   w̄_uv = w_uv / Σ_{v' ∈ N(u)} w_uv'
 * </pre>
 *
 * where U_T are the users who trust someone. A user's vector is pulled towards the weighted average
 * of the users they trust, and — through the terms of the users who trust them — towards what those
 * users need. With everything but p_x fixed the term is a quadratic in p_x with curvature β c_x I,
 * c_x = [x ∈ U_T] + Σ_{w: x ∈ N(w)} w̄_wx², and minimiser direction given by {@link #pull}. It acts on
 * the k factor coordinates only, never on biases.
 *
 * <p>Normalised weights and curvatures are computed once, O(|E| + m). Everything here sums in a fixed
 * order, so results do not depend on threads.
 */
final class NeighbourTerm {

    private final int users;
    private final float beta;
    private final int[] outStart;
    private final int[] trustees;
    private final double[] outShare;
    private final int[] inStart;
    private final int[] trusters;
    private final double[] inShare;
    private final double[] curvature;

    private NeighbourTerm(int users, float beta, int[] outStart, int[] trustees, double[] outShare, int[] inStart,
            int[] trusters, double[] inShare, double[] curvature) {
        this.users = users;
        this.beta = beta;
        this.outStart = outStart;
        this.trustees = trustees;
        this.outShare = outShare;
        this.inStart = inStart;
        this.trusters = trusters;
        this.inShare = inShare;
        this.curvature = curvature;
    }

    static NeighbourTerm of(TrustGraph t, float beta) {
        int m = t.numUsers();
        double[] total = new double[m];
        int[] outStart = t.outStart();
        float[] w = t.outWeights();
        for (int u = 0; u < m; u++) {
            for (int at = outStart[u]; at < outStart[u + 1]; at++) {
                total[u] += w[at];
            }
        }
        double[] outShare = new double[w.length];
        for (int u = 0; u < m; u++) {
            for (int at = outStart[u]; at < outStart[u + 1]; at++) {
                outShare[at] = w[at] / total[u];
            }
        }
        int[] inStart = t.inStart();
        int[] trusters = t.trusters();
        float[] inW = t.inWeights();
        double[] inShare = new double[inW.length];
        double[] curvature = new double[m];
        for (int v = 0; v < m; v++) {
            double c = t.outDegree(v) > 0 ? 1.0 : 0.0;
            for (int at = inStart[v]; at < inStart[v + 1]; at++) {
                inShare[at] = inW[at] / total[trusters[at]];
                c += inShare[at] * inShare[at];
            }
            curvature[v] = c;
        }
        return new NeighbourTerm(m, beta, outStart, t.trustees(), outShare, inStart, trusters, inShare, curvature);
    }

    float beta() {
        return beta;
    }

    /** True when user u takes part in some term (trusts someone or is trusted). */
    boolean involves(int u) {
        return curvature[u] > 0;
    }

    /** c_u: the term's curvature in p_u is β c_u I. */
    double curvature(int u) {
        return curvature[u];
    }

    /**
     * d_u = p_u − Σ w̄_uv p_v for every user who trusts someone, 0 for the others, into {@code d}
     * (m × k, row-major). Cost O(|E|·k).
     */
    void residual(float[] p, int k, double[] d) {
        for (int u = 0; u < users; u++) {
            residualRow(p, k, d, u);
        }
    }

    /** Row u of {@link #residual}. */
    void residualRow(float[] p, int k, double[] d, int u) {
        int du = u * k;
        if (outStart[u] == outStart[u + 1]) {
            for (int a = 0; a < k; a++) {
                d[du + a] = 0;
            }
            return;
        }
        for (int a = 0; a < k; a++) {
            d[du + a] = p[du + a];
        }
        for (int at = outStart[u]; at < outStart[u + 1]; at++) {
            double s = outShare[at];
            int pv = trustees[at] * k;
            for (int a = 0; a < k; a++) {
                d[du + a] -= s * p[pv + a];
            }
        }
    }

    /**
     * The linear part of the term in p_x with every other row fixed: the term equals
     * β (c_x ‖p_x‖² − 2 p_x·pull_x) + const, with
     * pull_x = [x ∈ U_T] (p_x − d_x) + Σ_{w: x ∈ N(w)} w̄_wx (d_w + w̄_wx p_x),
     * computed from the current P and its residual d. Writes k values to {@code out}. Cost O((1 + in(x))·k).
     */
    void pull(int x, float[] p, int k, double[] d, double[] out) {
        int px = x * k;
        if (outStart[x] < outStart[x + 1]) {
            for (int a = 0; a < k; a++) {
                out[a] = p[px + a] - d[px + a];
            }
        } else {
            for (int a = 0; a < k; a++) {
                out[a] = 0;
            }
        }
        for (int at = inStart[x]; at < inStart[x + 1]; at++) {
            double s = inShare[at];
            int dw = trusters[at] * k;
            for (int a = 0; a < k; a++) {
                out[a] += s * (d[dw + a] + s * p[px + a]);
            }
        }
    }

    /** β Σ ‖d_u‖² for a residual from {@link #residual}. */
    double value(double[] d) {
        double s = 0;
        for (double x : d) {
            s += x * x;
        }
        return beta * s;
    }

    /** Adds ∂/∂P of the term, 2β([u ∈ U_T] d_u − Σ_{w: u ∈ N(w)} w̄_wu d_w), to {@code grad} (m × k). */
    void addGradient(double[] d, int k, double[] grad) {
        for (int u = 0; u < users; u++) {
            int gu = u * k;
            for (int a = 0; a < k; a++) {
                grad[gu + a] += 2.0 * beta * d[gu + a];
            }
            for (int at = inStart[u]; at < inStart[u + 1]; at++) {
                double s = 2.0 * beta * inShare[at];
                int dw = trusters[at] * k;
                for (int a = 0; a < k; a++) {
                    grad[gu + a] -= s * d[dw + a];
                }
            }
        }
    }

    /**
     * Σ_{u ∈ U_T} of {@code f(δ_u)} pieces for a direction D (m × k, double): writes into
     * {@code out[0]} Σ d_u·δ_u and into {@code out[1]} Σ ‖δ_u‖², where δ_u = D_u − Σ w̄_uv D_v, over the
     * users {@code from..to}. Cost O((to − from + edges)·k).
     */
    void directional(double[] d, double[] dir, int k, int from, int to, double[] scratch, double[] out) {
        double lin = 0;
        double quad = 0;
        for (int u = from; u < to; u++) {
            if (outStart[u] == outStart[u + 1]) {
                continue;
            }
            int du = u * k;
            for (int a = 0; a < k; a++) {
                scratch[a] = dir[du + a];
            }
            for (int at = outStart[u]; at < outStart[u + 1]; at++) {
                double s = outShare[at];
                int dv = trustees[at] * k;
                for (int a = 0; a < k; a++) {
                    scratch[a] -= s * dir[dv + a];
                }
            }
            for (int a = 0; a < k; a++) {
                lin += d[du + a] * scratch[a];
                quad += scratch[a] * scratch[a];
            }
        }
        out[0] = lin;
        out[1] = quad;
    }

    int[] outStart() {
        return outStart;
    }

    int[] trustees() {
        return trustees;
    }

    double[] outShare() {
        return outShare;
    }

    int[] inStart() {
        return inStart;
    }

    int[] trusters() {
        return trusters;
    }

    double[] inShare() {
        return inShare;
    }
}
