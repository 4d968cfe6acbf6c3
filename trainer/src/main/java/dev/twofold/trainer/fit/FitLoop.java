package dev.twofold.trainer.fit;

import dev.twofold.trainer.parallel.Workers;
import java.util.ArrayList;
import java.util.List;

/**
 * The epoch loop every solver shares: run an epoch, report the objective and the validation RMSE,
 * and stop early when the validation RMSE has not improved for {@code patience} epochs, keeping the
 * best epoch's parameters.
 */
final class FitLoop {

    /** One epoch of a solver; returns how many row solves failed (those rows kept their values). */
    @FunctionalInterface
    interface Epoch {
        int run(int epoch);
    }

    private FitLoop() {
    }

    static FittedModel run(TrainingData data, FitSettings s, FitState st, Workers workers, EpochListener listener,
            Epoch step) {
        List<EpochReport> history = new ArrayList<>();
        Best best = s.patience() > 0 && !data.validation().isEmpty() ? new Best() : null;
        for (int epoch = 1; epoch <= s.epochs(); epoch++) {
            int failures = step.run(epoch);
            FittedModel current = st.model(s, List.of());
            EpochReport report = new EpochReport(epoch, Objective.value(data, current, workers), data.validation().rmse(current),
                    failures);
            history.add(report);
            listener.onEpoch(report);
            if (best != null && best.stopAfter(report, s.patience(), st)) {
                break;
            }
        }
        if (best != null) {
            best.restore(st);
        }
        return st.model(s, history);
    }

    /** The parameters of the epoch with the best validation RMSE so far, for early stopping. */
    private static final class Best {
        private double rmse = Double.POSITIVE_INFINITY;
        private int stale;
        private float[] p;
        private float[] bu;
        private float[] q;
        private float[] bi;
        private float[] z;

        boolean stopAfter(EpochReport report, int patience, FitState st) {
            if (report.validationRmse() < rmse) {
                rmse = report.validationRmse();
                stale = 0;
                p = st.p.clone();
                bu = st.bu.clone();
                q = st.q.clone();
                bi = st.bi.clone();
                z = st.z == null ? null : st.z.clone();
                return false;
            }
            stale++;
            return stale >= patience;
        }

        void restore(FitState st) {
            if (p == null) {
                return;
            }
            System.arraycopy(p, 0, st.p, 0, p.length);
            System.arraycopy(bu, 0, st.bu, 0, bu.length);
            System.arraycopy(q, 0, st.q, 0, q.length);
            System.arraycopy(bi, 0, st.bi, 0, bi.length);
            if (z != null) {
                System.arraycopy(z, 0, st.z, 0, z.length);
            }
        }
    }
}
