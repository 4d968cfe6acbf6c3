package dev.twofold.trainer.planted;

import dev.twofold.trainer.evaluate.TopK;
import java.util.Arrays;
import java.util.BitSet;
import java.util.SplittableRandom;

/**
 * Generates the demo scenario: a neighbourhood cooking community where cooks rate recipes 1–5 and
 * follow cooks whose taste they trust, from a planted low-rank model with taste communities.
 *
 * <ul>
 *   <li>Each cook belongs to one of C communities. A community has a centre taste vector c (Gaussian,
 *       sd {@value #CENTRE_SD} per coordinate); a cook's taste is p_u = c + personal deviation (sd
 *       {@value #PERSONAL_SD}). Recipes have latent vectors q_i (sd 1/√k), so p·q has sd ≈ 0.9 stars.
 *   <li>Leniency b_u (sd {@value #COOK_BIAS_SD}) and recipe quality b_i (sd {@value #RECIPE_BIAS_SD}),
 *       around μ = {@value #MEAN_RATING}.
 *   <li>A rating is clamp(round(μ + b_u + b_i + p_u·q_i + noise)) with Gaussian noise of sd σ, rounded
 *       to whole stars 1..5 (or to one decimal). The noise-free value μ + b_u + b_i + p_u·q_i is kept
 *       for every rating, so the error of a perfect model (the noise floor) can be computed exactly.
 *   <li>Regular cooks rate a long-tailed number of recipes (median about the typical count, lognormal
 *       tail); newcomers rate only 1–3. Which recipes a cook rates follows a long-tailed recipe
 *       popularity that leans towards good recipes, and mildly their own appeal (weight
 *       exp({@value #CHOICE_BY_APPEAL}·appeal)): people cook what they expect to like, but not only
 *       that, so the stars spread as in real rating data (about 3% ones, 11% twos, 27% threes, 33%
 *       fours, 26% fives, mean about 3.7) rather than piling up at five.
 *   <li>Every cook, newcomers included, follows about F cooks whose taste they trust: they meet
 *       {@value #CANDIDATES_PER_FOLLOW} cooks per follow (most from their own community) and follow
 *       the closest in taste, drawn with weight exp(−{@value #TASTE_AFFINITY}·‖p_u − p_v‖²) by the
 *       Gumbel-top-k trick. Weight 1 inside the community and 0.5 outside.
 *   <li>Rating times spread over half a year; newcomers rate in the last weeks.
 * </ul>
 *
 * Deterministic for a seed. Ids look like {@code cook-00042} and {@code recipe-0137}.
 */
public final class CookingCommunity {

    static final double CENTRE_SD = 0.8;
    static final double PERSONAL_SD = 0.45;
    static final double COOK_BIAS_SD = 0.3;
    static final double RECIPE_BIAS_SD = 0.4;
    static final double MEAN_RATING = 3.2;
    static final float SCALE_MIN = 1f;
    static final float SCALE_MAX = 5f;
    private static final long START_EPOCH_SECONDS = 1_767_225_600L; // 2026-01-01T00:00:00Z
    private static final long HALF_YEAR_SECONDS = 182L * 24 * 3600;
    private static final long NEWCOMER_WINDOW_SECONDS = 21L * 24 * 3600;
    static final double CHOICE_BY_APPEAL = 0.5;
    static final double POPULARITY_SPREAD = 0.5;
    static final int CANDIDATES_PER_FOLLOW = 6;
    static final double TASTE_AFFINITY = 4.0;

    private CookingCommunity() {
    }

    public static PlantedCommunity generate(CommunitySpec spec) {
        SplittableRandom random = new SplittableRandom(spec.seed());
        int m = spec.cooks();
        int n = spec.recipes();
        int k = spec.rank();
        int c = spec.communities();

        double[] centres = gaussians(random, c * k, CENTRE_SD);
        int[] community = new int[m];
        boolean[] newcomer = new boolean[m];
        double[] taste = new double[m * k];
        double[] cookBias = new double[m];
        for (int u = 0; u < m; u++) {
            community[u] = u < c ? u : random.nextInt(c); // every community has someone
            for (int a = 0; a < k; a++) {
                taste[u * k + a] = centres[community[u] * k + a] + PERSONAL_SD * gaussian(random);
            }
            cookBias[u] = COOK_BIAS_SD * gaussian(random);
            newcomer[u] = random.nextDouble() < spec.newcomerShare();
        }
        double[] flavour = gaussians(random, n * k, 1 / Math.sqrt(k));
        double[] quality = gaussians(random, n, RECIPE_BIAS_SD);

        // Long-tailed popularity leaning towards good recipes: log weight = spread (0.6 z_quality + 0.8 ε).
        double[] logPopularity = new double[n];
        for (int i = 0; i < n; i++) {
            logPopularity[i] = POPULARITY_SPREAD * (0.6 * quality[i] / RECIPE_BIAS_SD + 0.8 * gaussian(random));
        }

        int[] counts = new int[m];
        long rows = 0;
        int cap = Math.max(1, n / 2);
        for (int u = 0; u < m; u++) {
            if (newcomer[u]) {
                counts[u] = 1 + random.nextInt(3);
            } else {
                double tail = Math.exp(0.8 * gaussian(random));
                counts[u] = (int) Math.min(cap, Math.max(4, Math.round(spec.typicalRatings() * tail)));
            }
            counts[u] = Math.min(counts[u], n);
            rows += counts[u];
        }
        if (rows > Integer.MAX_VALUE - 8) {
            throw new IllegalArgumentException("the spec asks for " + rows + " ratings; at most " + (Integer.MAX_VALUE - 8));
        }
        int size = (int) rows;
        int[] user = new int[size];
        int[] item = new int[size];
        float[] value = new float[size];
        double[] truth = new double[size];
        long[] time = new long[size];
        int[] picked = new int[Math.max(1, cap)];
        double[] appeal = new double[n];
        int at = 0;
        for (int u = 0; u < m; u++) {
            // Cooks choose what to cook by popularity and by appeal (b_i + p_u·q_i): the recipes are
            // drawn without replacement with weight pop_i · exp(γ · appeal), by the Gumbel-top-k trick.
            TopK picks = new TopK(counts[u]);
            for (int i = 0; i < n; i++) {
                double a = quality[i];
                for (int x = 0; x < k; x++) {
                    a += taste[u * k + x] * flavour[i * k + x];
                }
                appeal[i] = a;
                double gumbel = -Math.log(-Math.log(openUniform(random)));
                picks.offer(i, logPopularity[i] + CHOICE_BY_APPEAL * a + gumbel);
            }
            int got = picks.drainBestFirst(picked);
            for (int j = 0; j < Math.min(counts[u], got); j++) {
                int i = picked[j];
                double signal = MEAN_RATING + cookBias[u] + appeal[i];
                double observed = signal + spec.noise() * gaussian(random);
                user[at] = u;
                item[at] = i;
                truth[at] = signal;
                value[at] = round(observed, spec.wholeStars());
                time[at] = newcomer[u]
                        ? START_EPOCH_SECONDS + HALF_YEAR_SECONDS - NEWCOMER_WINDOW_SECONDS + random.nextLong(NEWCOMER_WINDOW_SECONDS)
                        : START_EPOCH_SECONDS + random.nextLong(HALF_YEAR_SECONDS);
                at++;
            }
        }

        int[][] members = new int[c][];
        int[] fill = new int[c];
        for (int u = 0; u < m; u++) {
            fill[community[u]]++;
        }
        for (int g = 0; g < c; g++) {
            members[g] = new int[fill[g]];
            fill[g] = 0;
        }
        for (int u = 0; u < m; u++) {
            members[community[u]][fill[community[u]]++] = u;
        }
        int maxEdges = spec.follows() == 0 ? 0 : m * (spec.follows() + spec.follows() / 2 + 1);
        int[] truster = new int[maxEdges];
        int[] trustee = new int[maxEdges];
        float[] weight = new float[maxEdges];
        int edges = 0;
        BitSet followed = new BitSet(m);
        for (int u = 0; u < m && spec.follows() > 0; u++) {
            followed.clear();
            int want = spec.follows() / 2 + random.nextInt(spec.follows() + 1);
            // A cook meets about CANDIDATES_PER_FOLLOW cooks per follow (most from their own community)
            // and follows those whose taste is closest, with Gumbel noise: weight exp(−affinity·‖p_u − p_v‖²).
            TopK chosen = new TopK(Math.max(1, want));
            int meet = CANDIDATES_PER_FOLLOW * want;
            for (int f = 0; f < meet; f++) {
                boolean inside = random.nextDouble() < spec.followWithinCommunity() && members[community[u]].length > 1;
                int v = inside ? members[community[u]][random.nextInt(members[community[u]].length)] : random.nextInt(m);
                double gumbel = -Math.log(-Math.log(openUniform(random)));
                if (v == u || followed.get(v)) {
                    continue;
                }
                followed.set(v);
                double distance = 0;
                for (int a = 0; a < k; a++) {
                    double d = taste[u * k + a] - taste[v * k + a];
                    distance += d * d;
                }
                chosen.offer(v, -TASTE_AFFINITY * distance + gumbel);
            }
            int got = chosen.drainBestFirst(picked.length >= want ? picked : (picked = new int[want]));
            for (int f = 0; f < got; f++) {
                int v = picked[f];
                truster[edges] = u;
                trustee[edges] = v;
                weight[edges] = community[v] == community[u] ? 1f : 0.5f;
                edges++;
            }
        }
        return new PlantedCommunity(spec, user, item, value, time, truth, Arrays.copyOf(truster, edges),
                Arrays.copyOf(trustee, edges), Arrays.copyOf(weight, edges), community, newcomer,
                new PlantedCommunity.Truth(MEAN_RATING, cookBias, quality, taste, flavour));
    }

    private static float round(double observed, boolean wholeStars) {
        double r = wholeStars ? Math.rint(observed) : Math.rint(observed * 10) / 10;
        return (float) Math.max(SCALE_MIN, Math.min(SCALE_MAX, r));
    }

    /** Uniform in the open interval (0, 1). */
    private static double openUniform(SplittableRandom random) {
        return ((random.nextLong() >>> 11) + 0.5) * 0x1.0p-53;
    }

    private static double[] gaussians(SplittableRandom random, int size, double sd) {
        double[] g = new double[size];
        for (int x = 0; x < size; x++) {
            g[x] = sd * gaussian(random);
        }
        return g;
    }

    /** Box–Muller from two uniforms, so the stream is the same on every JVM. */
    private static double gaussian(SplittableRandom random) {
        double a = random.nextDouble();
        double b = random.nextDouble();
        return Math.sqrt(-2 * Math.log1p(-a)) * Math.cos(2 * Math.PI * b);
    }
}
