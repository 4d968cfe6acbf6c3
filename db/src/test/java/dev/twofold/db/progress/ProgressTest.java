package dev.twofold.db.progress;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.PrintWriter;
import java.io.StringWriter;
import java.util.concurrent.atomic.AtomicLong;
import org.junit.jupiter.api.Test;

class ProgressTest {

    private static final long SECOND = 1_000_000_000L;
    /** 2026-01-01T00:00:00Z */
    private static final long WALL = 1_767_225_600_000L;

    @Test
    void a_log_gets_plain_lines_at_most_every_interval_with_the_time_left() {
        StringWriter text = new StringWriter();
        AtomicLong now = new AtomicLong();
        Progress progress = new Progress(new PrintWriter(text), false, now::get, () -> WALL, "train");
        Progress.Task fit = progress.start("fit", 20);
        now.set(2 * SECOND);
        fit.advance(4, "objective 123.4");
        now.set(3 * SECOND);
        fit.advance(6, "not shown: within the interval");
        now.set(13 * SECOND);
        fit.advance(10, "");
        now.set(26 * SECOND);
        fit.finish("done");
        String[] lines = text.toString().split("\n");
        assertEquals(3, lines.length, text.toString());
        assertEquals("2026-01-01T00:00:00Z train: fit 4/20 (20%), 0:02 elapsed, ETA 0:08  objective 123.4", lines[0]);
        assertEquals("2026-01-01T00:00:00Z train: fit 10/20 (50%), 0:13 elapsed, ETA 0:13", lines[1]);
        assertEquals("2026-01-01T00:00:00Z train: fit 20/20 (100%), 0:26 elapsed  done", lines[2]);
    }

    @Test
    void a_terminal_gets_one_line_redrawn_in_place_with_a_bar() {
        StringWriter text = new StringWriter();
        AtomicLong now = new AtomicLong();
        Progress progress = new Progress(new PrintWriter(text), true, now::get, () -> WALL, "sweep");
        Progress.Task sweep = progress.start("sweep", 4);
        now.set(SECOND);
        sweep.advance(1, "");
        now.set(3 * SECOND);
        sweep.finish("");
        String shown = text.toString();
        assertTrue(shown.startsWith("\rsweep [######..................] 1/4  0:01  ETA 0:03"), shown);
        assertTrue(shown.contains("\rsweep [########################] 4/4  0:03"), shown);
        assertTrue(shown.endsWith("\n"), "the finished bar ends its line");
        assertEquals(1, shown.split("\n").length);
    }

    @Test
    void steps_worth_a_line_each_are_always_logged() {
        StringWriter text = new StringWriter();
        AtomicLong now = new AtomicLong();
        Progress progress = new Progress(new PrintWriter(text), false, now::get, () -> WALL, "train");
        Progress.Task fit = progress.start("fit", 3);
        now.set(SECOND);
        fit.advanceAndLog(1, "epoch 1 objective 10");
        now.set(2 * SECOND);
        fit.advanceAndLog(2, "epoch 2 objective 9");
        String[] lines = text.toString().split("\n");
        assertEquals(2, lines.length, text.toString());
        assertTrue(lines[1].endsWith("fit 2/3 (66%), 0:02 elapsed, ETA 0:01  epoch 2 objective 9"), lines[1]);
    }

    @Test
    void an_amount_on_a_terminal_shows_a_share_and_nothing_when_it_ends_at_once() {
        StringWriter text = new StringWriter();
        AtomicLong now = new AtomicLong();
        Progress progress = new Progress(new PrintWriter(text), true, now::get, () -> WALL, "import");
        Progress.Task quick = progress.startAmount("reading trust.csv", 1000);
        quick.advance(999, "");
        quick.finish("10 rows");
        assertEquals("", text.toString(), "a phase over before the first redraw shows nothing");

        Progress.Task slow = progress.startAmount("writing ratings", 1000);
        now.addAndGet(2 * SECOND);
        slow.advance(250, "");
        now.addAndGet(2 * SECOND);
        slow.finish("1000 ratings written");
        String shown = text.toString();
        assertTrue(shown.startsWith("\rwriting ratings [######..................]  25%  0:02  ETA 0:06"), shown);
        assertTrue(shown.endsWith("\rwriting ratings [########################] 100%  0:04    1000 ratings written\u001b[K\n"),
                shown);
    }

    @Test
    void notes_are_stamped_in_a_log_and_a_silent_progress_shows_nothing() {
        StringWriter text = new StringWriter();
        new Progress(new PrintWriter(text), false, () -> 0L, () -> WALL, "train").note("chose rank 8");
        assertEquals("2026-01-01T00:00:00Z train: chose rank 8\n", text.toString());
        Progress silent = Progress.silent();
        Progress.Task task = silent.start("fit", 3);
        task.advanceAndLog(1, "epoch 1");
        task.finish("");
        silent.note("nothing to see");
    }

    @Test
    void durations_read_as_minutes_and_seconds_or_hours() {
        assertEquals("0:00", Progress.duration(0.2));
        assertEquals("1:05", Progress.duration(65));
        assertEquals("1:01:01", Progress.duration(3661));
    }
}
