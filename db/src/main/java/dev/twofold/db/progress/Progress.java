package dev.twofold.db.progress;

import java.io.OutputStreamWriter;
import java.io.PrintWriter;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.time.ZoneOffset;
import java.time.format.DateTimeFormatter;
import java.util.Locale;
import java.util.function.LongSupplier;

/**
 * Shows how far long work has come, for every command (import, train, sweep). On a terminal
 * ({@code System.console() != null}) a task is one line redrawn in place: a bar, how much is done,
 * the time spent and the estimated time left. In a log (a pipe, a file, a scheduler) it is plain
 * timestamped lines, at most one every {@link #LOG_INTERVAL_MS} ms per task, so logs stay short but
 * show the job is alive.
 *
 * <p>Two kinds of task:
 * <ul>
 *   <li>{@link #start steps} (epochs, sweep settings): each step is news, so a log gets a line at the
 *       first step, then at most one per interval, and one at the end; shown as {@code done/total};
 *   <li>{@link #startAmount amounts} (bytes read, rows written): only a slow phase is news, so nothing
 *       is shown until it has run for a redraw interval (terminal) or {@link #LOG_INTERVAL_MS} (log),
 *       and its end only if something was shown or it ran that long — short phases stay silent;
 *       shown as a percentage.
 * </ul>
 *
 * <p>The estimate assumes the rest goes as fast on average as what is done. Not thread-safe: a task
 * is advanced by the thread doing the work.
 */
public final class Progress {

    /** Least time between two plain log lines of one task, and how long an amount runs before it logs at all. */
    public static final long LOG_INTERVAL_MS = 5_000;
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
     * @param name       prefix of every plain line: the command
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

    /** Starts a task of {@code total} steps (at least 1), shown as done/total. */
    public Task start(String what, long total) {
        return new Task(what, Math.max(1, total), false);
    }

    /**
     * Starts a task measured in an amount (bytes, rows; {@code total} at least 1), shown as a
     * percentage and silent unless it runs long.
     */
    public Task startAmount(String what, long total) {
        return new Task(what, Math.max(1, total), true);
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

    /** One piece of long work, advanced by the thread doing it. */
    public final class Task {
        private final String what;
        private final long total;
        private final boolean amount;
        private final long startNanos;
        private long lastShownNanos;
        private boolean shown;
        private long done;
        private boolean finished;

        private Task(String what, long total, boolean amount) {
            this.what = what;
            this.total = total;
            this.amount = amount;
            this.startNanos = clockNanos.getAsLong();
            this.lastShownNanos = startNanos;
        }

        /** Records that {@code doneSoFar} of the total are done; {@code detail} (may be empty) is shown beside. */
        public void advance(long doneSoFar, String detail) {
            done = Math.min(total, Math.max(0, doneSoFar));
            long now = clockNanos.getAsLong();
            long interval = (terminal ? REDRAW_INTERVAL_MS : LOG_INTERVAL_MS) * 1_000_000L;
            boolean firstStep = !amount && !shown;
            if (firstStep || now - lastShownNanos >= interval) {
                show(now, detail, false);
            }
        }

        /**
         * Like {@link #advance}, but in a log the line is always written: for steps worth a line each,
         * such as the epochs of a fit with their objective.
         */
        public void advanceAndLog(long doneSoFar, String detail) {
            if (terminal) {
                advance(doneSoFar, detail);
                return;
            }
            done = Math.min(total, Math.max(0, doneSoFar));
            show(clockNanos.getAsLong(), detail, false);
        }

        /** Ends the task (what is not done counts as done). Safe to call twice. */
        public void finish(String detail) {
            if (finished) {
                return;
            }
            finished = true;
            done = total;
            long now = clockNanos.getAsLong();
            if (!amount || shown || now - startNanos >= LOG_INTERVAL_MS * 1_000_000L) {
                show(now, detail, true);
            }
        }

        private void show(long now, String detail, boolean last) {
            lastShownNanos = now;
            shown = true;
            if (out == null) {
                return;
            }
            double elapsed = (now - startNanos) / 1e9;
            String left = done == 0 || last ? "" : "ETA " + duration(elapsed * (total - done) / done);
            String extra = detail == null || detail.isEmpty() ? "" : "  " + detail;
            int percent = (int) (100 * done / total);
            if (terminal) {
                int filled = (int) (BAR_WIDTH * done / total);
                String bar = "#".repeat(filled) + ".".repeat(BAR_WIDTH - filled);
                String count = amount ? String.format(Locale.ROOT, "%3d%%", percent) : done + "/" + total;
                out.print(String.format(Locale.ROOT, "\r%s [%s] %s  %s  %s%s\u001b[K", what, bar, count,
                        duration(elapsed), left, extra));
                if (last) {
                    out.println();
                }
            } else {
                String count = amount ? percent + "%" : String.format(Locale.ROOT, "%d/%d (%d%%)", done, total, percent);
                out.println(String.format(Locale.ROOT, "%s %s: %s %s, %s elapsed%s%s", stamp(), name, what, count,
                        duration(elapsed), left.isEmpty() ? "" : ", " + left, extra));
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
