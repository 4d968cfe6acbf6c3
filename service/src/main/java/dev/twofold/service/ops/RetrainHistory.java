package dev.twofold.service.ops;

import dev.twofold.db.registry.ModelHeader;
import dev.twofold.db.registry.ModelRegistry;
import io.micrometer.core.instrument.Counter;
import io.micrometer.core.instrument.Gauge;
import io.micrometer.core.instrument.MeterRegistry;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Collections;
import java.util.List;
import java.util.Objects;
import java.util.Optional;
import java.util.concurrent.atomic.AtomicReference;
import java.util.function.Supplier;
import java.util.function.ToDoubleFunction;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * What the trainer recorded in PostgreSQL, as the service last read it: every model version with
 * its status, times and held-out figures. The trainer writes; the service only reads, every
 * refresh interval and after a model swap. The readings become the {@code twofold_retrain_*}
 * gauges (outcomes, durations, when the last retrain succeeded and failed) and the dashboard's
 * history.
 *
 * <p>Statuses (see {@link ModelRegistry}): a retrain <em>succeeded</em> when it ran to the end and
 * was evaluated, whether its version was promoted ({@code active}, later {@code retired}), kept
 * ({@code candidate}) or refused by the quality gate ({@code rejected}); it <em>failed</em> when
 * its version is {@code failed}; it is <em>running</em> while {@code training} (a killed trainer
 * leaves its version there, so a retrain that never finishes shows up as a missing success).
 *
 * <p>A failed read (database down) keeps the previous reading, counts the failure and says why
 * on the dashboard; it is logged once per distinct reason.
 */
final class RetrainHistory {

    private static final Logger LOG = LoggerFactory.getLogger(RetrainHistory.class);

    static final List<String> STATUSES = List.of(ModelRegistry.TRAINING, ModelRegistry.CANDIDATE,
            ModelRegistry.ACTIVE, ModelRegistry.REJECTED, ModelRegistry.FAILED, ModelRegistry.RETIRED);
    /** Outcomes of the newest retrain, the values of the {@code outcome} label. */
    static final List<String> OUTCOMES = List.of("promoted", "kept", "rejected", "failed", "running");

    /** One model version as the history shows it. */
    record Version(long id, String status, Instant createdAt, Instant finishedAt, HeldOutFigures figures,
            String reason) {

        /** Training time, or NaN while it runs (or when it was never finished). */
        double durationSeconds() {
            return finishedAt == null ? Double.NaN : Duration.between(createdAt, finishedAt).toMillis() / 1000.0;
        }

        boolean succeeded() {
            return finishedAt != null && !status.equals(ModelRegistry.FAILED) && !status.equals(ModelRegistry.TRAINING);
        }

        /** promoted, kept, rejected, failed or running. */
        String outcome() {
            return switch (status) {
                case ModelRegistry.ACTIVE, ModelRegistry.RETIRED -> "promoted";
                case ModelRegistry.CANDIDATE -> "kept";
                case ModelRegistry.TRAINING -> "running";
                default -> status;
            };
        }
    }

    /**
     * One reading.
     *
     * @param versions every version, oldest first
     * @param previous the version a rollback would return to, if any
     */
    record Reading(Instant readAt, List<Version> versions, Optional<Long> previous) {

        Optional<Version> newest() {
            return versions.isEmpty() ? Optional.empty() : Optional.of(versions.get(versions.size() - 1));
        }

        Optional<Version> find(long id) {
            return versions.stream().filter(v -> v.id() == id).findFirst();
        }

        Optional<Version> lastSuccess() {
            return newestWhere(Version::succeeded);
        }

        Optional<Version> lastFailure() {
            return newestWhere(v -> v.status().equals(ModelRegistry.FAILED));
        }

        /** The newest version that went through the promotion decision (it has figures to compare). */
        Optional<Version> lastCompared() {
            return newestWhere(v -> v.succeeded() && !Double.isNaN(v.figures().candidateRmse()));
        }

        private Optional<Version> newestWhere(java.util.function.Predicate<Version> test) {
            for (int j = versions.size() - 1; j >= 0; j--) {
                if (test.test(versions.get(j))) {
                    return Optional.of(versions.get(j));
                }
            }
            return Optional.empty();
        }
    }

    private final Supplier<List<ModelHeader>> list;
    private final Supplier<Optional<Long>> previous;
    private final Clock clock;
    private final AtomicReference<Reading> reading = new AtomicReference<>();
    /** The reading a scrape on this thread shows, pinned for the whole scrape (see {@link #consistent}). */
    private final ThreadLocal<Reading> pinned = new ThreadLocal<>();
    private final Counter failures;
    private volatile String problem;

    /** Reads through the registry. */
    RetrainHistory(ModelRegistry registry, MeterRegistry meters, Clock clock) {
        this(registry::list, registry::previous, meters, clock);
    }

    /**
     * @param list     every version, newest first (as {@link ModelRegistry#list()})
     * @param previous the rollback target (as {@link ModelRegistry#previous()})
     */
    RetrainHistory(Supplier<List<ModelHeader>> list, Supplier<Optional<Long>> previous, MeterRegistry meters,
            Clock clock) {
        this.list = list;
        this.previous = previous;
        this.clock = clock;
        this.failures = Counter.builder("twofold.retrain.history.read.failures")
                .description("Failed reads of the model registry by the service (the retrain gauges keep the last"
                        + " reading meanwhile)")
                .register(meters);
        register(meters);
    }

    /** Reads the registry now; true when it could. */
    boolean refresh() {
        try {
            List<ModelHeader> headers = list.get();
            Optional<Long> rollbackTarget = previous.get();
            List<Version> versions = new ArrayList<>(headers.size());
            for (int j = headers.size() - 1; j >= 0; j--) {
                ModelHeader h = headers.get(j);
                versions.add(new Version(h.id(), h.status(), h.createdAt(), h.finishedAt(),
                        HeldOutFigures.parse(h.metricsJson()), h.reason()));
            }
            versions.sort((a, b) -> Long.compare(a.id(), b.id()));
            reading.set(new Reading(clock.instant(), Collections.unmodifiableList(versions), rollbackTarget));
            if (problem != null) {
                LOG.info("reading the model registry works again");
            }
            problem = null;
            return true;
        } catch (RuntimeException e) {
            failures.increment();
            String reason = "cannot read the model registry: " + e.getMessage();
            if (!Objects.equals(reason, problem)) {
                LOG.warn("{}; the retrain figures keep their last reading", reason);
            }
            problem = reason;
            return false;
        }
    }

    /** The last successful reading, or null before one. */
    Reading reading() {
        return reading.get();
    }

    /**
     * Runs {@code scrape} with every retrain gauge showing the one reading current when it began.
     * Each gauge is evaluated on its own as the scrape goes; without the pin a refresh landing
     * mid-scrape gave one scrape a version count from the new reading and the newest outcome from
     * the old one.
     */
    <T> T consistent(Supplier<T> scrape) {
        pinned.set(reading.get());
        try {
            return scrape.get();
        } finally {
            pinned.remove();
        }
    }

    /** What a gauge shows now: the reading pinned on this thread by {@link #consistent}, else the latest. */
    private Reading shown() {
        Reading p = pinned.get();
        return p != null ? p : reading.get();
    }

    /** Why the last read failed, or null when it worked. */
    String problem() {
        return problem;
    }

    private void register(MeterRegistry meters) {
        for (String status : STATUSES) {
            Gauge.builder("twofold.retrain.versions", this,
                            shownOr(r -> r.versions().stream().filter(v -> v.status().equals(status)).count()))
                    .description("Model versions in the registry by status (training, candidate, active, rejected,"
                            + " failed, retired)")
                    .tag("status", status)
                    .strongReference(true)
                    .register(meters);
        }
        for (String outcome : OUTCOMES) {
            Gauge.builder("twofold.retrain.last.outcome", this, shownOr(r -> r.newest()
                            .map(v -> v.outcome().equals(outcome) ? 1.0 : 0.0).orElse(Double.NaN)))
                    .description("1 for the outcome of the newest retrain (promoted, kept, rejected, failed, running),"
                            + " 0 for the others")
                    .tag("outcome", outcome)
                    .strongReference(true)
                    .register(meters);
        }
        gauge(meters, "twofold.retrain.last.success.timestamp", "seconds",
                "When the newest retrain that ran to the end finished (Unix time)",
                r -> r.lastSuccess().map(v -> epochSeconds(v.finishedAt())).orElse(Double.NaN));
        gauge(meters, "twofold.retrain.last.failure.timestamp", "seconds", "When the newest failed retrain ended"
                + " (Unix time)", r -> r.lastFailure()
                .map(v -> epochSeconds(v.finishedAt() != null ? v.finishedAt() : v.createdAt())).orElse(Double.NaN));
        gauge(meters, "twofold.retrain.last.started.timestamp", "seconds", "When the newest retrain started"
                + " (Unix time)", r -> r.newest().map(v -> epochSeconds(v.createdAt())).orElse(Double.NaN));
        gauge(meters, "twofold.retrain.last.duration", "seconds", "How long the newest finished retrain took",
                r -> r.versions().stream().filter(v -> v.finishedAt() != null)
                        .reduce((a, b) -> b).map(Version::durationSeconds).orElse(Double.NaN));
        gauge(meters, "twofold.retrain.last.candidate.rmse", null, "Held-out RMSE of the newest evaluated retrain's"
                + " model", r -> r.lastCompared().map(v -> v.figures().candidateRmse()).orElse(Double.NaN));
        gauge(meters, "twofold.retrain.last.reference.rmse", null, "Held-out RMSE, on the same held-out data, of the"
                + " live model that newest retrain was compared against (NaN when there was none)",
                r -> r.lastCompared().map(v -> v.figures().referenceRmse()).orElse(Double.NaN));
        gauge(meters, "twofold.model.previous.heldout.rmse", null, "Held-out RMSE of the version that was live before"
                + " the active one (the rollback target)", r -> previousFigure(r, HeldOutFigures::rmse));
        gauge(meters, "twofold.model.previous.heldout.precision.at.k", null, "Held-out precision@k of the version that"
                + " was live before the active one", r -> previousFigure(r, HeldOutFigures::precision));
        Gauge.builder("twofold.retrain.history.age", this,
                        shownOr(r -> Duration.between(r.readAt(), clock.instant()).toMillis() / 1000.0))
                .description("Time since the service last read the model registry")
                .baseUnit("seconds")
                .strongReference(true)
                .register(meters);
    }

    private void gauge(MeterRegistry meters, String name, String unit, String description,
            ToDoubleFunction<Reading> value) {
        Gauge.Builder<RetrainHistory> builder = Gauge.builder(name, this, shownOr(value))
                .description(description)
                .strongReference(true);
        if (unit != null) {
            builder.baseUnit(unit);
        }
        builder.register(meters);
    }

    /** A gauge function over {@link #shown()}: {@code value} of it, NaN before the first reading. */
    private static ToDoubleFunction<RetrainHistory> shownOr(ToDoubleFunction<Reading> value) {
        return h -> {
            Reading r = h.shown();
            return r == null ? Double.NaN : value.applyAsDouble(r);
        };
    }

    private static double previousFigure(Reading r, ToDoubleFunction<HeldOutFigures> pick) {
        return r.previous().flatMap(r::find).map(v -> pick.applyAsDouble(v.figures())).orElse(Double.NaN);
    }

    private static double epochSeconds(Instant at) {
        return at.toEpochMilli() / 1000.0;
    }
}
