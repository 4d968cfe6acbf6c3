package dev.twofold.trainer.progress;

import java.io.OutputStreamWriter;
import java.io.PrintWriter;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.time.ZoneOffset;
import java.time.format.DateTimeFormatter;
import java.util.Locale;
import java.util.function.LongSupplier;

/**
 * Shows how far long work has come. On a terminal ({@code System.console() != null}) a task is one
 * line redrawn in place, a bar with the share done, the time spent and the estimated time left; in a
 * log (a pipe, a file, a scheduler) it is plain timestamped lines, one every
 * {@link #LOG_INTERVAL_MS} ms at most (and at the end of each task), so logs stay short but show the
 * job is alive.
 *
 * <p>The estimate assumes the remaining steps take as long on average as those done so far.
 */
public final class Progress {

    /** Least time between two plain log lines of one task. */
    public static final long LOG_INTERVAL_MS = 10_000;
    /** Least time between two redraws of the bar. */
    public static final long REDRAW_INTERVAL_MS = 100;
    private static final int BAR_WIDTH = 24;
    private static final DateTimeFormatter STAMP = DateTimeFormatter.ofPattern("yyyy-MM-dd'T'HH:mm:ss'Z'", Locale.ROOT)
            .withZone(ZoneOffset.UTC);

    private final PrintWriter out;
    private final boolean terminal;
    private final LongSupplier clockNanos;
    private final LongSupplier wallMillis;
    private final String name;

    /**
     * @param out        where to write (standard error for commands)
     * @param terminal   draw a bar (true) or write plain lines (false)
     * @param clockNanos monotonic clock, {@link System#nanoTime} outside tests
     * @param wallMillis wall clock for the timestamps of plain lines
     * @param name       prefix of every line, e.g. the command
     */
    public Progress(PrintWriter out, boolean terminal, LongSupplier clockNanos, LongSupplier wallMillis, String name) {
        this.out = out;
        this.terminal = terminal;
        this.clockNanos = clockNanos;
        this.wallMillis = wallMillis;
        this.name = name;
    }

    /** Progress on standard error: a bar on a terminal, plain lines otherwise. */
    public static Progress forConsole(String name) {
        return new Progress(new PrintWriter(new OutputStreamWriter(System.err, StandardCharsets.UTF_8), true),
                System.console() != null, System::nanoTime, System::currentTimeMillis, name);
    }

    /** Shows nothing. */
    public static Progress silent() {
        return new Progress(null, false, System::nanoTime, System::currentTimeMillis, "");
    }

    /** Starts a task of {@code total} steps (at least 1). */
    public Task start(String what, long total) {
        return new Task(what, Math.max(1, total));
    }

    /** A line on its own (a choice made, a phase finished). */
    public void note(String text) {
        if (out == null) {
            return;
        }
        out.println(terminal ? text : stamp() + " " + name + ": " + text);
        out.flush();
    }

    private String stamp() {
        return STAMP.format(Instant.ofEpochMilli(wallMillis.getAsLong()));
    }

    /** One piece of long work, advanced step by step. */
    public final class Task {
        private final String what;
        private final long total;
        private final long startNanos;
        private long lastShownNanos = Long.MIN_VALUE;
        private long done;
        private boolean finished;

        private Task(String what, long total) {
            this.what = what;
            this.total = total;
            this.startNanos = clockNanos.getAsLong();
        }

        /** Records that {@code doneSoFar} steps are done; {@code detail} (may be empty) is shown beside. */
        public void advance(long doneSoFar, String detail) {
            done = Math.min(total, Math.max(0, doneSoFar));
            show(detail, false, false);
        }

        /**
         * Like {@link #advance}, but in a log the line is always written: for steps worth a line each,
         * such as the epochs of a fit with their objective.
         */
        public void advanceAndLog(long doneSoFar, String detail) {
            done = Math.min(total, Math.max(0, doneSoFar));
            show(detail, false, true);
        }

        /** Ends the task (steps not done are counted as done). Safe to call twice. */
        public void finish(String detail) {
            if (finished) {
                return;
            }
            finished = true;
            done = total;
            show(detail, true, false);
        }

        private void show(String detail, boolean last, boolean always) {
            if (out == null) {
                return;
            }
            long now = clockNanos.getAsLong();
            long interval = (terminal ? REDRAW_INTERVAL_MS : LOG_INTERVAL_MS) * 1_000_000L;
            if (!last && !(always && !terminal) && lastShownNanos != Long.MIN_VALUE && now - lastShownNanos < interval) {
                return;
            }
            lastShownNanos = now;
            double elapsed = (now - startNanos) / 1e9;
            String left = done == 0 || last ? "" : "ETA " + duration(elapsed * (total - done) / done);
            String extra = detail == null || detail.isEmpty() ? "" : "  " + detail;
            if (terminal) {
                int filled = (int) (BAR_WIDTH * done / total);
                String bar = "#".repeat(filled) + ".".repeat(BAR_WIDTH - filled);
                out.print(String.format(Locale.ROOT, "\r%s [%s] %d/%d  %s  %s%s\u001b[K", what, bar, done, total,
                        duration(elapsed), left, extra));
                if (last) {
                    out.println();
                }
            } else {
                out.println(String.format(Locale.ROOT, "%s %s: %s %d/%d (%d%%), %s elapsed%s%s", stamp(), name, what,
                        done, total, 100 * done / total, duration(elapsed), left.isEmpty() ? "" : ", " + left, extra));
            }
            out.flush();
        }
    }

    /** m:ss, or h:mm:ss from an hour on. */
    static String duration(double seconds) {
        long s = Math.max(0, Math.round(seconds));
        if (s >= 3600) {
            return String.format(Locale.ROOT, "%d:%02d:%02d", s / 3600, (s / 60) % 60, s % 60);
        }
        return String.format(Locale.ROOT, "%d:%02d", s / 60, s % 60);
    }
}
