package dev.twofold.trainer.sweep;

import java.util.List;
import java.util.Locale;
import java.util.function.ToDoubleFunction;

/**
 * Draws a sweep as a self-contained SVG: two panels, validation RMSE and precision@k against rank
 * (log scale), one line per λ, the chosen setting circled. Plain SVG 1.1 text, no fonts or scripts.
 */
final class SweepPlot {

    private static final int PANEL_W = 420;
    private static final int PANEL_H = 300;
    private static final int MARGIN_L = 64;
    private static final int MARGIN_R = 16;
    private static final int MARGIN_T = 36;
    private static final int MARGIN_B = 48;
    private static final int LEGEND_H = 28;
    private static final String[] COLOURS = {"#1f77b4", "#d62728", "#2ca02c", "#9467bd", "#ff7f0e", "#8c564b",
        "#e377c2", "#17becf"};

    private SweepPlot() {
    }

    static String render(SweepResult result) {
        int width = 2 * (MARGIN_L + PANEL_W + MARGIN_R);
        int height = MARGIN_T + PANEL_H + MARGIN_B + LEGEND_H;
        StringBuilder s = new StringBuilder();
        s.append(String.format(Locale.ROOT, "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"%d\" height=\"%d\" "
                + "viewBox=\"0 0 %d %d\" font-family=\"sans-serif\" font-size=\"12\">%n", width, height, width, height));
        s.append(String.format(Locale.ROOT, "<rect width=\"%d\" height=\"%d\" fill=\"white\"/>%n", width, height));
        panel(s, result, 0, "validation RMSE", SweepPoint::validationRmse);
        panel(s, result, MARGIN_L + PANEL_W + MARGIN_R, "precision@" + result.k(), SweepPoint::precision);
        List<Float> lambdas = result.lambdas();
        int y = MARGIN_T + PANEL_H + MARGIN_B + 16;
        for (int l = 0; l < lambdas.size(); l++) {
            int x = MARGIN_L + l * 120;
            s.append(String.format(Locale.ROOT, "<line x1=\"%d\" y1=\"%d\" x2=\"%d\" y2=\"%d\" stroke=\"%s\" stroke-width=\"2\"/>%n",
                    x, y - 4, x + 24, y - 4, colour(l)));
            s.append(String.format(Locale.ROOT, "<text x=\"%d\" y=\"%d\">lambda %s</text>%n", x + 30, y,
                    SweepResult.number(lambdas.get(l))));
        }
        s.append(String.format(Locale.ROOT, "<text x=\"%d\" y=\"%d\">circled: chosen setting</text>%n",
                MARGIN_L + lambdas.size() * 120, y));
        s.append("</svg>\n");
        return s.toString();
    }

    private static void panel(StringBuilder s, SweepResult result, int left, String title,
            ToDoubleFunction<SweepPoint> value) {
        List<Integer> ranks = result.ranks();
        double lo = Double.POSITIVE_INFINITY;
        double hi = Double.NEGATIVE_INFINITY;
        for (SweepPoint p : result.points()) {
            double v = value.applyAsDouble(p);
            if (Double.isFinite(v)) {
                lo = Math.min(lo, v);
                hi = Math.max(hi, v);
            }
        }
        if (!Double.isFinite(lo)) {
            lo = 0;
            hi = 1;
        }
        if (hi - lo < 1e-9) {
            lo -= 0.5e-3;
            hi += 0.5e-3;
        }
        double pad = 0.08 * (hi - lo);
        lo -= pad;
        hi += pad;
        int x0 = left + MARGIN_L;
        int y0 = MARGIN_T;
        s.append(String.format(Locale.ROOT, "<text x=\"%d\" y=\"%d\" font-size=\"14\">%s against rank</text>%n", x0,
                y0 - 14, title));
        s.append(String.format(Locale.ROOT, "<rect x=\"%d\" y=\"%d\" width=\"%d\" height=\"%d\" fill=\"none\" stroke=\"#888\"/>%n",
                x0, y0, PANEL_W, PANEL_H));
        for (int t = 0; t <= 4; t++) {
            double v = lo + (hi - lo) * t / 4;
            double y = y(v, lo, hi);
            s.append(String.format(Locale.ROOT, "<line x1=\"%d\" y1=\"%.1f\" x2=\"%d\" y2=\"%.1f\" stroke=\"#eee\"/>%n",
                    x0, y, x0 + PANEL_W, y));
            s.append(String.format(Locale.ROOT, "<text x=\"%d\" y=\"%.1f\" text-anchor=\"end\">%.4f</text>%n", x0 - 6,
                    y + 4, v));
        }
        for (int r = 0; r < ranks.size(); r++) {
            double x = x(ranks, ranks.get(r), x0);
            s.append(String.format(Locale.ROOT, "<text x=\"%.1f\" y=\"%d\" text-anchor=\"middle\">%d</text>%n", x,
                    y0 + PANEL_H + 18, ranks.get(r)));
        }
        s.append(String.format(Locale.ROOT, "<text x=\"%d\" y=\"%d\" text-anchor=\"middle\">rank</text>%n",
                x0 + PANEL_W / 2, y0 + PANEL_H + 36));
        List<Float> lambdas = result.lambdas();
        SweepPoint best = result.best();
        for (int l = 0; l < lambdas.size(); l++) {
            StringBuilder path = new StringBuilder();
            for (int rank : ranks) {
                for (SweepPoint p : result.points()) {
                    double v = value.applyAsDouble(p);
                    if (p.rank() == rank && p.lambda() == lambdas.get(l) && Double.isFinite(v)) {
                        path.append(String.format(Locale.ROOT, "%s%.1f,%.1f", path.length() == 0 ? "" : " ",
                                x(ranks, rank, x0), y(v, lo, hi)));
                        s.append(String.format(Locale.ROOT, "<circle cx=\"%.1f\" cy=\"%.1f\" r=\"3\" fill=\"%s\"/>%n",
                                x(ranks, rank, x0), y(v, lo, hi), colour(l)));
                        if (p == best) {
                            s.append(String.format(Locale.ROOT, "<circle cx=\"%.1f\" cy=\"%.1f\" r=\"8\" fill=\"none\" "
                                    + "stroke=\"black\" stroke-width=\"1.5\"/>%n", x(ranks, rank, x0), y(v, lo, hi)));
                        }
                    }
                }
            }
            if (path.length() > 0) {
                s.append(String.format(Locale.ROOT, "<polyline points=\"%s\" fill=\"none\" stroke=\"%s\" stroke-width=\"2\"/>%n",
                        path, colour(l)));
            }
        }
    }

    /** Ranks on a log scale across the panel (a single rank in the middle). */
    private static double x(List<Integer> ranks, int rank, int x0) {
        double a = Math.log(ranks.get(0));
        double b = Math.log(ranks.get(ranks.size() - 1));
        double inset = 24;
        if (b - a < 1e-12) {
            return x0 + PANEL_W / 2.0;
        }
        return x0 + inset + (PANEL_W - 2 * inset) * (Math.log(rank) - a) / (b - a);
    }

    private static double y(double v, double lo, double hi) {
        return MARGIN_T + PANEL_H * (1 - (v - lo) / (hi - lo));
    }

    private static String colour(int index) {
        return COLOURS[index % COLOURS.length];
    }
}
