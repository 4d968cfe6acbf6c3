package dev.twofold.trainer.fit;

import java.util.Locale;
import java.util.function.Supplier;

/** The solvers a fit can use, by the name given on the command line ({@code --solver}). */
public enum SolverKind {
    /** Alternating least squares with k×k Cholesky solves per row: {@link AlsSolver}. */
    ALS(AlsSolver::new),
    /** Cyclic coordinate descent with a maintained residual (CCD++): {@link CcdSolver}. */
    CCD(CcdSolver::new),
    /** Greedy coordinate descent with variable selection: {@link GreedySolver}. */
    GREEDY(GreedySolver::new);

    private final Supplier<Solver> factory;

    SolverKind(Supplier<Solver> factory) {
        this.factory = factory;
    }

    /** A new solver of this kind. */
    public Solver create() {
        return factory.get();
    }

    public String label() {
        return name().toLowerCase(Locale.ROOT);
    }

    public static SolverKind parse(String text) {
        for (SolverKind s : values()) {
            if (s.label().equals(text)) {
                return s;
            }
        }
        throw new IllegalArgumentException("solver '" + text + "' is not one of als, ccd, greedy");
    }
}
