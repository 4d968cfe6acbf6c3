package dev.twofold.trainer.sweep;

import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.TreeSet;

/** The points of a sweep, the choice among them, and their table, CSV and plot. */
public record SweepResult(List<SweepPoint> points, int k) {

    public SweepResult {
        points = List.copyOf(points);
        if (points.isEmpty()) {
            throw new IllegalArgumentException("a sweep result needs at least one point");
        }
    }

    /** The lowest validation RMSE; ties within {@link Sweep#TIE_RMSE} go to the smaller rank, then the larger λ. */
    public SweepPoint best() {
        SweepPoint best = null;
        for (SweepPoint p : points) {
            if (best == null || p.validationRmse() < best.validationRmse() - Sweep.TIE_RMSE) {
                best = p;
            } else if (Math.abs(p.validationRmse() - best.validationRmse()) <= Sweep.TIE_RMSE
                    && (p.rank() < best.rank() || (p.rank() == best.rank() && p.lambda() > best.lambda()))) {
                best = p;
            }
        }
        return best;
    }

    /** One sentence saying what was chosen and why. */
    public String why() {
        SweepPoint best = best();
        SweepPoint runnerUp = null;
        for (SweepPoint p : points) {
            if (p != best && (runnerUp == null || p.validationRmse() < runnerUp.validationRmse())) {
                runnerUp = p;
            }
        }
        String text = String.format(Locale.ROOT, "chose rank %d, lambda %s: lowest validation RMSE %.4f of %d settings "
                + "(%sbest at epoch %d)", best.rank(), number(best.lambda()), best.validationRmse(), points.size(),
                Double.isFinite(best.precision()) ? String.format(Locale.ROOT, "precision@%d %.4f, ", k, best.precision())
                : "", best.bestEpoch());
        if (runnerUp != null) {
            text += String.format(Locale.ROOT, "; next best rank %d, lambda %s with %.4f", runnerUp.rank(),
                    number(runnerUp.lambda()), runnerUp.validationRmse());
        }
        return text;
    }

    /** A fixed-width table for a person, the best row marked with *. */
    public String table() {
        StringBuilder s = new StringBuilder();
        String precision = "prec@" + k;
        s.append(String.format(Locale.ROOT, "%6s %8s %10s %10s %6s %8s%n", "rank", "lambda", "val RMSE", precision,
                "epoch", "seconds"));
        SweepPoint best = best();
        for (SweepPoint p : points) {
            s.append(String.format(Locale.ROOT, "%6d %8s %10.4f %10s %6d %8.2f%s%n", p.rank(), number(p.lambda()),
                    p.validationRmse(), Double.isFinite(p.precision()) ? String.format(Locale.ROOT, "%.4f", p.precision())
                    : "-", p.bestEpoch(), p.seconds(), p == best ? " *" : ""));
        }
        return s.toString();
    }

    /** {@code rank,lambda,validation_rmse,precision_at_k,k,best_epoch,epochs_run,seconds}, one row per point. */
    public String csv() {
        StringBuilder s = new StringBuilder("rank,lambda,validation_rmse,precision_at_k,k,best_epoch,epochs_run,seconds\n");
        for (SweepPoint p : points) {
            s.append(String.format(Locale.ROOT, "%d,%s,%.6f,%s,%d,%d,%d,%.3f%n", p.rank(), number(p.lambda()),
                    p.validationRmse(), Double.isFinite(p.precision()) ? String.format(Locale.ROOT, "%.6f", p.precision())
                    : "", k, p.bestEpoch(), p.epochsRun(), p.seconds()));
        }
        return s.toString();
    }

    /** The sweep as an SVG plot: validation RMSE and precision@k against rank, one line per λ. */
    public String svg() {
        return SweepPlot.render(this);
    }

    List<Float> lambdas() {
        return new ArrayList<>(new TreeSet<>(points.stream().map(SweepPoint::lambda).toList()));
    }

    List<Integer> ranks() {
        return new ArrayList<>(new TreeSet<>(points.stream().map(SweepPoint::rank).toList()));
    }

    /** A float without trailing zeros: 0.04, 1, 0.125. */
    static String number(float value) {
        String s = String.format(Locale.ROOT, "%.6f", value);
        s = s.replaceAll("0+$", "");
        return s.endsWith(".") ? s.substring(0, s.length() - 1) : s;
    }
}
