package dev.twofold.service.testing;

import java.time.Duration;
import java.util.function.BooleanSupplier;
import java.util.function.Supplier;

/** Waiting for something another thread or process does, with an upper bound so a broken test ends. */
public final class Await {

    private static final long POLL_MS = 20;

    private Await() {
    }

    /** Returns once {@code condition} holds; fails after {@code bound} saying what it waited for. */
    public static void until(String what, Duration bound, BooleanSupplier condition) throws InterruptedException {
        until(what, bound, condition, () -> "");
    }

    /** As {@link #until(String, Duration, BooleanSupplier)}, adding {@code context} (a log, a last answer) to the failure. */
    public static void until(String what, Duration bound, BooleanSupplier condition, Supplier<String> context)
            throws InterruptedException {
        long deadline = System.nanoTime() + bound.toNanos();
        while (!condition.getAsBoolean()) {
            if (System.nanoTime() > deadline) {
                throw new AssertionError("gave up after " + bound + " waiting until " + what + context.get());
            }
            Thread.sleep(POLL_MS);
        }
    }
}
