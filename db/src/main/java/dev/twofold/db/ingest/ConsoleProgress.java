package dev.twofold.db.ingest;

import java.io.OutputStreamWriter;
import java.io.PrintWriter;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.time.ZoneOffset;
import java.time.format.DateTimeFormatter;
import java.util.Locale;
import java.util.function.LongSupplier;

/**
 * Import progress on standard error. On a terminal ({@code System.console() != null}) each phase is
 * one line redrawn in place: a bar, the share done, the time spent and the estimated time left. In a
 * log (a pipe, a file, a scheduler) it is plain timestamped lines: one when a phase has run for
 * {@link #LOG_INTERVAL_MS} ms and then at most one per interval, and one at the end of every phase
 * that ran that long — so short imports log nothing and long ones show they are alive.
 *
 * <p>The estimate assumes the rest goes as fast on average as what is done.
 */
public final class ConsoleProgress implements ImportProgress {

    /** Least time between two plain log lines, and how long a phase runs before it logs at all. */
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
    private String phase;
    private long total;
    private long done;
    private long startNanos;
    private long lastShownNanos;
    private boolean shown;

    /**
     * @param out        where to write
     * @param terminal   redraw a bar (true) or write plain lines (false)
     * @param clockNanos monotonic clock ({@link System#nanoTime} outside tests)
     * @param wallMillis wall clock for the timestamps of plain lines
     */
    public ConsoleProgress(PrintWriter out, boolean terminal, LongSupplier clockNanos, LongSupplier wallMillis) {
        this.out = out;
        this.terminal = terminal;
        this.clockNanos = clockNanos;
        this.wallMillis = wallMillis;
    }

    /** Standard error: a bar when there is a console, plain lines otherwise. */
    public static ConsoleProgress onStandardError() {
        return new ConsoleProgress(new PrintWriter(new OutputStreamWriter(System.err, StandardCharsets.UTF_8), true),
                System.console() != null, System::nanoTime, System::currentTimeMillis);
    }

    @Override
    public void start(String phase, long total) {
        this.phase = phase;
        this.total = Math.max(1, total);
        this.done = 0;
        this.startNanos = clockNanos.getAsLong();
        this.lastShownNanos = startNanos;
        this.shown = false;
    }

    @Override
    public void advance(long doneSoFar) {
        if (phase == null) {
            return;
        }
        done = Math.min(total, Math.max(0, doneSoFar));
        long now = clockNanos.getAsLong();
        long wait = (terminal ? REDRAW_INTERVAL_MS : LOG_INTERVAL_MS) * 1_000_000L;
        if (now - lastShownNanos >= wait) {
            show(now, "", false);
        }
    }

    @Override
    public void finish(String detail) {
        if (phase == null) {
            return;
        }
        done = total;
        long now = clockNanos.getAsLong();
        if (shown || now - startNanos >= LOG_INTERVAL_MS * 1_000_000L) {
            show(now, detail, true);
        }
        phase = null;
    }

    private void show(long now, String detail, boolean last) {
        lastShownNanos = now;
        shown = true;
        double elapsed = (now - startNanos) / 1e9;
        String left = done == 0 || last ? "" : "ETA " + duration(elapsed * (total - done) / done);
        String extra = detail == null || detail.isEmpty() ? "" : "  " + detail;
        int percent = (int) (100 * done / total);
        if (terminal) {
            int filled = (int) (BAR_WIDTH * done / total);
            out.print(String.format(Locale.ROOT, "\r%s [%s] %3d%%  %s  %s%s\u001b[K", phase,
                    "#".repeat(filled) + ".".repeat(BAR_WIDTH - filled), percent, duration(elapsed), left, extra));
            if (last) {
                out.println();
            }
        } else {
            out.println(String.format(Locale.ROOT, "%s import: %s %d%%, %s elapsed%s%s",
                    STAMP.format(Instant.ofEpochMilli(wallMillis.getAsLong())), phase, percent, duration(elapsed),
                    left.isEmpty() ? "" : ", " + left, extra));
        }
        out.flush();
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
