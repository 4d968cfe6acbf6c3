package dev.twofold.service.ops;

import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.twofold.db.registry.ModelHeader;
import io.micrometer.core.instrument.simple.SimpleMeterRegistry;
import java.time.Clock;
import java.time.Instant;
import java.util.List;
import java.util.Optional;
import java.util.concurrent.atomic.AtomicReference;
import org.junit.jupiter.api.Test;

class RetrainHistoryTest {

    private static final Instant T0 = Instant.parse("2026-11-30T02:00:00Z");

    @Test
    void a_scrape_shows_one_reading_even_when_a_refresh_lands_in_the_middle_of_it() {
        List<ModelHeader> before = List.of(version(1, "active")); // newest first, as the registry lists
        List<ModelHeader> after = List.of(version(2, "failed"), version(1, "active"));
        AtomicReference<List<ModelHeader>> registry = new AtomicReference<>(before);
        SimpleMeterRegistry meters = new SimpleMeterRegistry();
        RetrainHistory history = new RetrainHistory(registry::get, Optional::empty, meters, Clock.systemUTC());
        history.refresh();

        registry.set(after);
        double[] seen = history.consistent(() -> {
            double failedBefore = failed(meters);
            history.refresh(); // another thread's refresh, landing mid-scrape
            return new double[] {failedBefore, failed(meters), outcome(meters, "failed"), outcome(meters, "promoted")};
        });
        // within the scrape: the first reading throughout (no failed version, the newest was promoted)
        assertEquals(0.0, seen[0]);
        assertEquals(0.0, seen[1]);
        assertEquals(0.0, seen[2]);
        assertEquals(1.0, seen[3]);
        // the next scrape sees the second reading whole
        assertEquals(1.0, failed(meters));
        assertEquals(1.0, outcome(meters, "failed"));
        assertEquals(0.0, outcome(meters, "promoted"));
    }

    private static double failed(SimpleMeterRegistry meters) {
        return meters.get("twofold.retrain.versions").tag("status", "failed").gauge().value();
    }

    private static double outcome(SimpleMeterRegistry meters, String outcome) {
        return meters.get("twofold.retrain.last.outcome").tag("outcome", outcome).gauge().value();
    }

    private static ModelHeader version(long id, String status) {
        Instant created = T0.plusSeconds(3600 * id);
        return new ModelHeader(id, status, 8, "shared", 0.05f, 1f, 1f, 1f, 5f, 3.5f, 10, 10, created,
                created.plusSeconds(60), "{}", "{}", "{}", status.equals("failed") ? "out of memory" : null);
    }
}
