import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStreamReader;
import java.io.PrintWriter;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.PreparedStatement;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.time.Duration;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.atomic.AtomicLong;
import java.util.concurrent.atomic.AtomicLongArray;
import java.util.regex.Matcher;
import java.util.regex.Pattern;

/**
 * The soak driver of {@code deploy/soak} (run from source with the twofold jar on the class path).
 *
 * <pre>
 * run    --port P --key KEY --pid PID --gc-log FILE --seconds S --ratings CSV --acked FILE [--threads N]
 * verify --acked FILE            (TWOFOLD_DATA_DIR or TWOFOLD_DB_* name the database)
 * </pre>
 *
 * {@code run} waits for 127.0.0.1:P to be ready, then drives mixed traffic for S seconds from N
 * threads (recommendations 85%, predictions 5%, similar items 2%, rating writes 6%, trust writes
 * 2%), every request with {@code Authorization: Bearer KEY}; every few seconds it forces a full GC
 * of process PID with jcmd and records the heap that collection left in use (from PID's GC log). Each thread writes only for its own
 * users, one request at a time, so the last acknowledged (202) value of each pair is the one the
 * database must hold; those are written to the acked file. It prints a report and exits 1 on any
 * 5xx, transport failure or heap growth trend. {@code verify} checks every acknowledged write
 * against the database with SQL and exits 1 when one is missing or different.
 */
public final class SoakDriver {

    /** A heap that grows by less than this over the measured window is flat. */
    static final long FLAT_HEAP_BYTES = 8L << 20;
    static final double FLAT_HEAP_SHARE = 0.05;
    static final double WARM_UP_SHARE = 0.2;
    /** Shorter runs report the heap line but do not fail on it: warm-up dominates them. */
    static final long MIN_TREND_SECONDS = 120;
    /** "80M->35M(128M)": the heap before, after and committed, in the unified GC log. */
    static final Pattern HEAP_AFTER = Pattern.compile("\\d+[KMG]->(\\d+)([KMG])\\(");

    public static void main(String[] args) throws Exception {
        Map<String, String> options = options(args);
        int exit = switch (args.length == 0 ? "" : args[0]) {
            case "run" -> run(options);
            case "verify" -> verify(Path.of(options.get("acked")));
            default -> {
                System.err.println("usage: SoakDriver run|verify [--option value ...]");
                yield 2;
            }
        };
        System.exit(exit);
    }

    // ---- run ------------------------------------------------------------------------------------

    static int run(Map<String, String> o) throws Exception {
        int port = Integer.parseInt(o.get("port"));
        String key = o.get("key");
        long pid = Long.parseLong(o.get("pid"));
        Path gcLog = Path.of(o.get("gc-log"));
        long seconds = Long.parseLong(o.get("seconds"));
        int threads = Integer.parseInt(o.getOrDefault("threads", "8"));
        List<String> users = new ArrayList<>();
        List<String> items = new ArrayList<>();
        readIds(Path.of(o.get("ratings")), users, items);
        String base = "http://127.0.0.1:" + port;
        HttpClient http = HttpClient.newBuilder().version(HttpClient.Version.HTTP_1_1).connectTimeout(Duration.ofSeconds(5)).build();
        awaitReady(http, base, Duration.ofMinutes(2));

        Stats stats = new Stats();
        List<Map<String, String>> acked = new ArrayList<>();
        long start = System.nanoTime();
        long end = start + seconds * 1_000_000_000L;
        List<Thread> workers = new ArrayList<>();
        for (int t = 0; t < threads; t++) {
            Map<String, String> mine = new LinkedHashMap<>();
            acked.add(mine);
            int id = t;
            Thread w = new Thread(() -> drive(http, base, key, users, items, id, threads, end, stats, mine), "soak-" + t);
            w.start();
            workers.add(w);
        }
        List<long[]> heap = new ArrayList<>();
        long interval = Math.max(2, Math.min(30, seconds / 20)) * 1_000_000_000L;
        for (long next = start; System.nanoTime() < end; next += interval) {
            long wait = next - System.nanoTime();
            if (wait > 0) {
                Thread.sleep(Math.min(wait, Math.max(1, end - System.nanoTime())) / 1_000_000);
            }
            if (System.nanoTime() >= end) {
                break;
            }
            long used = liveHeap(pid, gcLog);
            heap.add(new long[] {(System.nanoTime() - start) / 1_000_000, used});
            System.err.printf(Locale.ROOT, "  %5d s  live heap %7.1f MiB  requests %d  5xx %d%n", (System.nanoTime() - start) / 1_000_000_000L,
                    used / 1048576.0, stats.requests.get(), stats.serverErrors.get());
        }
        for (Thread w : workers) {
            w.join();
        }
        heap.add(new long[] {(System.nanoTime() - start) / 1_000_000, liveHeap(pid, gcLog)});
        double elapsed = (System.nanoTime() - start) / 1e9;

        long writes = 0;
        try (PrintWriter out = new PrintWriter(Files.newBufferedWriter(Path.of(o.get("acked")), StandardCharsets.UTF_8))) {
            for (Map<String, String> m : acked) {
                for (Map.Entry<String, String> e : m.entrySet()) {
                    out.println(e.getKey() + "\t" + e.getValue());
                    writes++;
                }
            }
        }
        return report(stats, heap, elapsed, threads, writes);
    }

    static final class Stats {
        final AtomicLong requests = new AtomicLong();
        final AtomicLong serverErrors = new AtomicLong();
        final AtomicLong clientErrors = new AtomicLong();
        final AtomicLong transportErrors = new AtomicLong();
        final AtomicLong acceptedWrites = new AtomicLong();
        final Map<String, AtomicLong> byKind = new ConcurrentHashMap<>();
        /** Latency histogram in 0.1 ms buckets up to 10 s. */
        final AtomicLongArray latency = new AtomicLongArray(100_001);
        final List<String> samples = java.util.Collections.synchronizedList(new ArrayList<>());
    }

    static void drive(HttpClient http, String base, String key, List<String> users, List<String> items, int me, int threads,
            long end, Stats stats, Map<String, String> acked) {
        SplittableRandom random = new SplittableRandom(20261201L + me);
        List<String> mine = new ArrayList<>();
        for (int u = me; u < users.size(); u += threads) {
            mine.add(users.get(u));
        }
        while (System.nanoTime() < end) {
            int dice = random.nextInt(100);
            String user = users.get(random.nextInt(users.size()));
            String kind;
            HttpRequest.Builder request;
            String ackKey = null;
            String ackValue = null;
            if (dice < 85) {
                kind = "recommendations";
                request = HttpRequest.newBuilder(URI.create(base + "/v1/users/" + encode(user) + "/recommendations?count=10")).GET();
            } else if (dice < 90) {
                kind = "predictions";
                StringBuilder body = new StringBuilder("{\"pairs\":[");
                for (int p = 0; p < 20; p++) {
                    body.append(p == 0 ? "" : ",").append("{\"user\":").append(json(user)).append(",\"item\":")
                            .append(json(items.get(random.nextInt(items.size())))).append('}');
                }
                request = post(base + "/v1/predictions", body.append("]}").toString());
            } else if (dice < 92) {
                kind = "similar";
                request = HttpRequest.newBuilder(URI.create(base + "/v1/items/" + encode(items.get(random.nextInt(items.size())))
                        + "/similar?count=10")).GET();
            } else if (dice < 98) {
                kind = "ratings";
                String writer = mine.get(random.nextInt(mine.size()));
                String item = items.get(random.nextInt(items.size()));
                int stars = 1 + random.nextInt(5);
                ackKey = "r\t" + writer + "\t" + item;
                ackValue = Integer.toString(stars);
                request = post(base + "/v1/ratings", "[{\"user\":" + json(writer) + ",\"item\":" + json(item) + ",\"rating\":" + stars + "}]");
            } else {
                kind = "trust";
                String truster = mine.get(random.nextInt(mine.size()));
                String trustee = users.get(random.nextInt(users.size()));
                if (trustee.equals(truster)) {
                    continue;
                }
                ackKey = "t\t" + truster + "\t" + trustee;
                ackValue = "0." + (1 + random.nextInt(9));
                request = post(base + "/v1/trust", "[{\"truster\":" + json(truster) + ",\"trustee\":" + json(trustee)
                        + ",\"weight\":" + ackValue + "}]");
            }
            request.header("Authorization", "Bearer " + key).timeout(Duration.ofSeconds(30));
            long t0 = System.nanoTime();
            int status;
            String body;
            try {
                HttpResponse<String> response = http.send(request.build(), HttpResponse.BodyHandlers.ofString());
                status = response.statusCode();
                body = response.body();
            } catch (IOException e) {
                stats.transportErrors.incrementAndGet();
                note(stats, kind + ": " + e);
                continue;
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
                return;
            }
            long micros = (System.nanoTime() - t0) / 1_000;
            stats.latency.incrementAndGet((int) Math.min(100_000, micros / 100));
            stats.requests.incrementAndGet();
            stats.byKind.computeIfAbsent(kind, k -> new AtomicLong()).incrementAndGet();
            if (status >= 500) {
                stats.serverErrors.incrementAndGet();
                note(stats, kind + " " + status + ": " + body);
            } else if (status >= 400) {
                stats.clientErrors.incrementAndGet();
                note(stats, kind + " " + status + ": " + body);
            } else if (ackKey != null && status == 202) {
                acked.put(ackKey, ackValue);
                stats.acceptedWrites.incrementAndGet();
            }
        }
    }

    static int report(Stats stats, List<long[]> heap, double elapsed, int threads, long distinctWrites) {
        long n = stats.requests.get();
        System.out.printf(Locale.ROOT, "duration: %.0f s, %d threads, %d requests, %.0f requests/s%n", elapsed, threads, n, n / elapsed);
        System.out.println("by kind: " + new java.util.TreeMap<>(stats.byKind));
        System.out.printf(Locale.ROOT, "latency: p50 %.1f ms, p99 %.1f ms, p99.9 %.1f ms, max bucket %.1f ms%n", quantile(stats, 0.5),
                quantile(stats, 0.99), quantile(stats, 0.999), quantile(stats, 1.0));
        System.out.println("5xx: " + stats.serverErrors.get());
        System.out.println("4xx: " + stats.clientErrors.get());
        System.out.println("transport failures: " + stats.transportErrors.get());
        System.out.println("acknowledged writes: " + stats.acceptedWrites.get() + " (" + distinctWrites + " distinct pairs to verify)");
        for (String s : stats.samples) {
            System.out.println("  e.g. " + s);
        }
        StringBuilder samples = new StringBuilder();
        for (long[] h : heap) {
            samples.append(String.format(Locale.ROOT, " %d s:%.1f", h[0] / 1000, h[1] / 1048576.0));
        }
        System.out.println("live heap after full GC (MiB):" + samples);
        boolean flat = true;
        List<long[]> measured = new ArrayList<>();
        for (long[] h : heap) {
            if (h[0] >= WARM_UP_SHARE * elapsed * 1000) {
                measured.add(h);
            }
        }
        if (measured.size() >= 3) {
            double[] fit = leastSquares(measured);
            double window = (measured.get(measured.size() - 1)[0] - measured.get(0)[0]) / 1000.0;
            double growth = fit[1] * window;
            double mean = fit[2];
            boolean judged = elapsed >= MIN_TREND_SECONDS;
            flat = !judged || growth < Math.max(FLAT_HEAP_BYTES, FLAT_HEAP_SHARE * mean);
            System.out.printf(Locale.ROOT, "heap trend after warm-up: %+.2f MiB/min (%+.1f MiB over %.0f s, mean %.1f MiB): %s%n",
                    fit[1] * 60 / 1048576.0, growth / 1048576.0, window, mean / 1048576.0,
                    !judged ? "not judged (runs under " + MIN_TREND_SECONDS + " s are too short for a trend)" : flat ? "flat" : "GROWING");
        } else {
            System.out.println("heap trend: too few samples after warm-up to fit a line");
        }
        boolean ok = stats.serverErrors.get() == 0 && stats.transportErrors.get() == 0 && stats.clientErrors.get() == 0 && flat
                && stats.acceptedWrites.get() > 0;
        System.out.println("load: " + (ok ? "PASS" : "FAIL"));
        return ok ? 0 : 1;
    }

    /** {intercept, slope per second, mean} of bytes over seconds. */
    static double[] leastSquares(List<long[]> points) {
        double n = points.size();
        double sx = 0;
        double sy = 0;
        double sxx = 0;
        double sxy = 0;
        for (long[] p : points) {
            double x = p[0] / 1000.0;
            double y = p[1];
            sx += x;
            sy += y;
            sxx += x * x;
            sxy += x * y;
        }
        double slope = (n * sxy - sx * sy) / (n * sxx - sx * sx);
        return new double[] {(sy - slope * sx) / n, slope, sy / n};
    }

    static double quantile(Stats stats, double q) {
        long total = 0;
        for (int i = 0; i < stats.latency.length(); i++) {
            total += stats.latency.get(i);
        }
        long rank = (long) Math.ceil(q * total);
        long seen = 0;
        for (int i = 0; i < stats.latency.length(); i++) {
            seen += stats.latency.get(i);
            if (seen >= rank && seen > 0) {
                return (i + 1) / 10.0;
            }
        }
        return 0;
    }

    /**
     * The heap left in use by a full collection of process {@code pid} (jcmd GC.run): the "after"
     * figure of its "Pause Full (Diagnostic Command)" line in the service's GC log ({@code -Xlog:gc:file=}),
     * which the requests running meanwhile cannot blur as a later heap reading would.
     */
    static long liveHeap(long pid, Path gcLog) throws IOException, InterruptedException {
        int before = fullGcs(gcLog).size();
        jcmd(pid, "GC.run");
        long deadline = System.nanoTime() + 10_000_000_000L;
        while (true) {
            List<Long> after = fullGcs(gcLog);
            if (after.size() > before) {
                return after.get(after.size() - 1);
            }
            if (System.nanoTime() > deadline) {
                throw new IOException("no new 'Pause Full' line in " + gcLog + " within 10 s of jcmd " + pid + " GC.run");
            }
            Thread.sleep(50);
        }
    }

    /** Heap after each full collection in the log, in bytes. */
    static List<Long> fullGcs(Path gcLog) throws IOException {
        List<Long> out = new ArrayList<>();
        if (!Files.exists(gcLog)) {
            return out;
        }
        for (String line : Files.readAllLines(gcLog, StandardCharsets.UTF_8)) {
            if (line.contains("Pause Full (")) { // jcmd GC.run logs "(Diagnostic Command)"; any full collection leaves the live set
                Matcher m = HEAP_AFTER.matcher(line);
                if (m.find()) {
                    long size = Long.parseLong(m.group(1));
                    out.add(switch (m.group(2)) {
                        case "K" -> size << 10;
                        case "M" -> size << 20;
                        default -> size << 30;
                    });
                }
            }
        }
        return out;
    }

    static String jcmd(long pid, String command) throws IOException, InterruptedException {
        Process p = new ProcessBuilder("jcmd", Long.toString(pid), command).redirectErrorStream(true).start();
        String out = new String(p.getInputStream().readAllBytes(), StandardCharsets.UTF_8);
        if (p.waitFor() != 0) {
            throw new IOException("jcmd " + pid + " " + command + " failed: " + out);
        }
        return out;
    }

    static void awaitReady(HttpClient http, String base, Duration within) throws Exception {
        long deadline = System.nanoTime() + within.toNanos();
        while (true) {
            try {
                HttpResponse<String> r = http.send(HttpRequest.newBuilder(URI.create(base + "/health/ready")).timeout(Duration.ofSeconds(5))
                        .build(), HttpResponse.BodyHandlers.ofString());
                if (r.statusCode() == 200) {
                    return;
                }
            } catch (IOException e) {
                // not listening yet
            }
            if (System.nanoTime() > deadline) {
                throw new IllegalStateException(base + " was not ready within " + within);
            }
            Thread.sleep(250);
        }
    }

    static void note(Stats stats, String what) {
        if (stats.samples.size() < 5) {
            stats.samples.add(what.length() > 300 ? what.substring(0, 300) : what);
        }
    }

    // ---- verify ---------------------------------------------------------------------------------

    static int verify(Path ackedFile) throws IOException, SQLException {
        if (!Files.exists(ackedFile)) {
            System.out.println("durability: FAIL (the load run recorded no acknowledged writes: it failed before the end)");
            return 1;
        }
        List<String[]> acked = new ArrayList<>();
        for (String line : Files.readAllLines(ackedFile, StandardCharsets.UTF_8)) {
            acked.add(line.split("\t"));
        }
        long found = 0;
        List<String> missing = new ArrayList<>();
        try (Database db = Database.open(DatabaseSettings.fromEnvironment(System.getenv()));
             Connection c = db.dataSource().getConnection();
             PreparedStatement rating = c.prepareStatement("select r.rating from ratings r join users u on u.idx = r.user_idx"
                     + " join items i on i.idx = r.item_idx where u.external_id = ? and i.external_id = ?");
             PreparedStatement trust = c.prepareStatement("select t.weight from trust t join users a on a.idx = t.truster_idx"
                     + " join users b on b.idx = t.trustee_idx where a.external_id = ? and b.external_id = ?")) {
            for (String[] a : acked) {
                PreparedStatement ps = a[0].equals("r") ? rating : trust;
                ps.setString(1, a[1]);
                ps.setString(2, a[2]);
                try (ResultSet rs = ps.executeQuery()) {
                    if (rs.next() && rs.getFloat(1) == Float.parseFloat(a[3])) {
                        found++;
                    } else if (missing.size() < 10) {
                        missing.add(String.join(" ", a));
                    }
                }
            }
        }
        System.out.println("acknowledged writes found in the database: " + found + " of " + acked.size());
        for (String m : missing) {
            System.out.println("  missing or different: " + m);
        }
        boolean ok = found == acked.size() && !acked.isEmpty();
        System.out.println("durability: " + (ok ? "PASS" : "FAIL"));
        return ok ? 0 : 1;
    }

    // ---- plumbing -------------------------------------------------------------------------------

    static void readIds(Path ratingsCsv, List<String> users, List<String> items) throws IOException {
        Map<String, Boolean> u = new HashMap<>();
        Map<String, Boolean> i = new HashMap<>();
        try (BufferedReader in = new BufferedReader(new InputStreamReader(Files.newInputStream(ratingsCsv), StandardCharsets.UTF_8))) {
            String line = in.readLine(); // header
            while ((line = in.readLine()) != null) {
                String[] f = line.split(",");
                if (f.length >= 3 && u.putIfAbsent(f[0], true) == null) {
                    users.add(f[0]);
                }
                if (f.length >= 3 && i.putIfAbsent(f[1], true) == null) {
                    items.add(f[1]);
                }
            }
        }
        if (users.size() < 2 || items.isEmpty()) {
            throw new IllegalStateException(ratingsCsv + " has too few users or items to drive traffic");
        }
    }

    static HttpRequest.Builder post(String url, String json) {
        return HttpRequest.newBuilder(URI.create(url)).header("Content-Type", "application/json")
                .POST(HttpRequest.BodyPublishers.ofString(json));
    }

    static String json(String s) {
        return "\"" + s.replace("\\", "\\\\").replace("\"", "\\\"") + "\"";
    }

    static String encode(String s) {
        return java.net.URLEncoder.encode(s, StandardCharsets.UTF_8).replace("+", "%20");
    }

    static Map<String, String> options(String[] args) {
        Map<String, String> o = new HashMap<>();
        for (int i = 1; i + 1 < args.length; i += 2) {
            if (!args[i].startsWith("--")) {
                throw new IllegalArgumentException("expected --option value, got " + args[i]);
            }
            o.put(args[i].substring(2), args[i + 1]);
        }
        return o;
    }
}
