package dev.twofold.service.bench;

import dev.twofold.db.access.ApiKeys;
import dev.twofold.db.access.KeyRole;
import dev.twofold.service.Service;
import dev.twofold.service.ServiceSettings;
import dev.twofold.service.access.KeyRing;
import dev.twofold.service.model.ServingModel;
import dev.twofold.service.scoring.ListCache;
import io.javalin.Javalin;
import java.io.IOException;
import java.lang.management.ManagementFactory;
import java.net.InetAddress;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.ZonedDateTime;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.concurrent.TimeUnit;
import java.util.regex.Matcher;
import java.util.regex.Pattern;

/**
 * The serving benchmark: wrk on loopback against the real service (a synthetic model of 20,000
 * items at rank 64, users chosen at random by a Lua script, every request carrying an API key that
 * the service checks as in production) and, in the same run, against a bare Javalin endpoint
 * returning a short string, the yardstick. A plain main, not a test; it only
 * talks to 127.0.0.1, runs a bounded time and stops everything it started.
 *
 * <pre>
 * JAVA_OPTS="--add-modules jdk.incubator.vector -Xmx2g" deploy/bench service \
 *     dev.twofold.service.bench.ServingBenchmark [users items rank seconds connections rounds listMiB]
 * </pre>
 * Defaults: 100,000 users, 20,000 items, rank 64, 10 s per run, 32 connections, wrk with 2
 * threads, 5 rounds alternating bare and service after a {@value #WARMUP_SECONDS} s warm-up of each; the median ratio of
 * the rounds is the figure (other work on a shared machine moves single runs a lot). Each run also
 * reports the CPU steal during it (time the hypervisor gave other guests, from /proc/stat): on a
 * shared VM it explains much of how far the same build's figures move between runs.
 *
 * <p>{@code listMiB} is the service's budget of kept ranked lists ({@code TWOFOLD_LIST_CACHE_MB},
 * default {@value ServiceSettings#DEFAULT_LIST_CACHE_MB}): with it, a user asked for again is
 * answered without scoring; 0 scores every request. Each run reports the share of requests answered
 * from kept lists. With the defaults every user fits, so after the warm-up nearly every request is
 * such a repeat; run with 0 to measure the scoring path itself.
 */
public final class ServingBenchmark {

    private static final long SEED = 20_000L;
    private static final int RATINGS_PER_USER = 20;
    /**
     * Warm-up of each server before the rounds. The service compiles its scoring kernel and, with
     * its default self-warm-up, its HTTP path before it takes traffic, yet under this load the JIT
     * goes on compiling (and recompiling after deoptimisations) for some 100 s: JFR's compiler
     * statistics show about a core's worth of compiling through the first 30 s of load, and with a
     * 30 s warm-up the first rounds' p99 was still 2-3 ms above the later ones' (docs/benchmarks.md).
     * The rounds are meant to show the steady state; the cold start is measured separately there.
     */
    private static final int WARMUP_SECONDS = 90;
    private static final String WRK = "/usr/bin/wrk";
    /** The benchmark's own key, held in the service's key ring only (no database here). */
    private static final String KEY = "tf_serving-benchmark-key";

    private ServingBenchmark() {
    }

    public static void main(String[] args) throws Exception {
        int users = args.length > 0 ? Integer.parseInt(args[0]) : 100_000;
        int items = args.length > 1 ? Integer.parseInt(args[1]) : 20_000;
        int k = args.length > 2 ? Integer.parseInt(args[2]) : 64;
        int seconds = args.length > 3 ? Integer.parseInt(args[3]) : 10;
        int connections = args.length > 4 ? Integer.parseInt(args[4]) : 32;
        int rounds = args.length > 5 ? Integer.parseInt(args[5]) : 5;
        int listMib = args.length > 6 ? Integer.parseInt(args[6]) : ServiceSettings.DEFAULT_LIST_CACHE_MB;

        ServingModel model = syntheticModel(users, items, k, SEED);
        Path dir = Files.createTempDirectory("twofold-bench-");
        Path script = dir.resolve("random-users.lua");
        Files.writeString(script, luaScript(users), StandardCharsets.UTF_8);
        Path bareScript = dir.resolve("bare.lua");
        Files.writeString(bareScript, "request = function() return wrk.format(\"GET\", \"/hello\") end\n",
                StandardCharsets.UTF_8);

        Javalin bare = Javalin.create(config -> {
            config.startup.showJavalinBanner = false;
            config.routes.get("/hello", ctx -> ctx.result("hello"));
        });
        bare.start("127.0.0.1", 0);
        KeyRing keys = new KeyRing(1);
        keys.replace(List.of(new ApiKeys.LiveKey(1, "bench", KeyRole.READ, ApiKeys.hash(KEY))));
        try (Service service = new Service(new ServiceSettings("127.0.0.1", 0, Duration.ofSeconds(5),
                Duration.ofSeconds(2)).withWarmUp(Duration.ofSeconds(ServiceSettings.DEFAULT_WARM_UP_SECONDS))
                .withListCache(listMib), keys)) {
            service.install(model);
            int port = service.start();
            String bareUrl = "http://127.0.0.1:" + bare.port();
            String serviceUrl = "http://127.0.0.1:" + port;

            System.out.printf(Locale.ROOT, "# serving benchmark %s%n", ZonedDateTime.now());
            System.out.printf(Locale.ROOT, "machine: %d cores (%s), %s %s, JVM %s, max heap %d MiB%n",
                    Runtime.getRuntime().availableProcessors(), cpuName(), System.getProperty("os.name"),
                    System.getProperty("os.version"), System.getProperty("java.vm.version"),
                    Runtime.getRuntime().maxMemory() >> 20);
            System.out.printf(Locale.ROOT, "model: %,d users, %,d items, rank %d, %d ratings per user; wrk -t2 -c%d"
                    + " -d%ds; load average before: %s%n", users, items, k, RATINGS_PER_USER, connections, seconds,
                    loadAverage());
            ListCache.Stats kept = service.live().lists().stats();
            System.out.printf(Locale.ROOT, "kept ranked lists: %d MiB, room for %,d users%n", listMib,
                    service.live().lists().slots());

            wrk(bareUrl, bareScript, WARMUP_SECONDS, connections, 0);
            wrk(serviceUrl, script, WARMUP_SECONDS, connections, 0);
            List<String> rows = new ArrayList<>();
            List<Double> ratios = new ArrayList<>();
            for (int round = 1; round <= rounds; round++) {
                Result b = wrk(bareUrl, bareScript, seconds, connections, round);
                long hits = kept.hits();
                long misses = kept.misses();
                Result s = wrk(serviceUrl, script, seconds, connections, round);
                long looked = kept.hits() - hits + kept.misses() - misses;
                double keptShare = looked == 0 ? 0 : 100.0 * (kept.hits() - hits) / looked;
                ratios.add(s.requestsPerSecond / b.requestsPerSecond);
                rows.add(String.format(Locale.ROOT, "| %d | %,.0f | %.2f | %,.0f | %.2f | %.2f | %.1f%% | %.1f%% | %s"
                        + " | %.1f / %.1f %% |",
                        round, b.requestsPerSecond, b.p99Millis, s.requestsPerSecond, s.p50Millis, s.p99Millis,
                        keptShare,
                        100 * s.requestsPerSecond / b.requestsPerSecond, s.errors == 0 && b.errors == 0 ? "0"
                                : b.errors + " / " + s.errors, b.stealPercent, s.stealPercent));
            }
            System.out.println();
            System.out.println("| round | bare req/s | bare p99 ms | service req/s | service p50 ms | service p99 ms"
                    + " | from kept lists | ratio | errors | CPU steal (bare / service) |");
            System.out.println("|---|---|---|---|---|---|---|---|---|---|");
            rows.forEach(System.out::println);
            ratios.sort(null);
            System.out.printf(Locale.ROOT, "%nmedian ratio %.1f%%; load average after: %s%n",
                    100 * ratios.get(ratios.size() / 2), loadAverage());
        } finally {
            bare.stop();
        }
    }

    /**
     * One user per request, uniformly among all users, ten items each, with the benchmark's key.
     * Every wrk thread of every run draws its own sequence (seeded by the run and the thread), so
     * no round replays the users of the warm-up or of another round.
     */
    static String luaScript(int users) {
        return "local threads = 0\n"
                + "setup = function(thread)\n"
                + "  threads = threads + 1\n"
                + "  thread:set(\"id\", threads)\n"
                + "end\n"
                + "init = function(args)\n"
                + "  math.randomseed(" + SEED + " + 1000 * tonumber(args[1] or 0) + id)\n"
                + "end\n"
                + "wrk.headers[\"Authorization\"] = \"Bearer " + KEY + "\"\n"
                + "request = function()\n"
                + "  return wrk.format(\"GET\", \"/v1/users/cook-\" .. math.random(0, " + (users - 1)
                + ") .. \"/recommendations?count=10\")\n"
                + "end\n"
                + "response = function(status, headers, body)\n"
                + "  if status ~= 200 then wrk.thread:stop() end\n"
                + "end\n";
    }

    /**
     * @param stealPercent share of the machine's CPU time the hypervisor gave to other guests
     *                     during the run (/proc/stat), NaN where unknown: on a shared VM the same
     *                     build's figures move with it
     */
    record Result(double requestsPerSecond, double p50Millis, double p99Millis, long errors, double stealPercent) {
    }

    /** The machine's CPU time counters of the /proc/stat "cpu" line (jiffies): all of them, and steal. */
    record CpuTimes(long total, long steal) {

        static CpuTimes now() {
            try {
                String[] f = Files.readAllLines(Path.of("/proc/stat")).get(0).trim().split("\\s+");
                long total = 0;
                // user nice system idle iowait irq softirq steal (guest time is inside user)
                for (int j = 1; j <= 8 && j < f.length; j++) {
                    total += Long.parseLong(f[j]);
                }
                return new CpuTimes(total, f.length > 8 ? Long.parseLong(f[8]) : 0);
            } catch (IOException | RuntimeException e) {
                return new CpuTimes(0, 0); // not Linux: steal unknown
            }
        }

        /** Steal as a percentage of the CPU time since {@code before}; NaN when nothing was counted. */
        double stealPercentSince(CpuTimes before) {
            long spent = total - before.total;
            return spent > 0 ? 100.0 * (steal - before.steal) / spent : Double.NaN;
        }
    }

    /** One wrk run; {@code run} seeds the script's random users (0 for the warm-up, then the round). */
    private static Result wrk(String url, Path script, int seconds, int connections, int run) throws IOException,
            InterruptedException {
        CpuTimes before = CpuTimes.now();
        Process p = new ProcessBuilder(WRK, "-t2", "-c" + connections, "-d" + seconds + "s", "--latency",
                "--timeout", "5s", "-s", script.toString(), url, "--", Integer.toString(run))
                .redirectErrorStream(true).start();
        String out = new String(p.getInputStream().readAllBytes(), StandardCharsets.UTF_8);
        if (!p.waitFor(seconds + 30L, TimeUnit.SECONDS)) {
            p.destroyForcibly();
            throw new IllegalStateException("wrk did not finish");
        }
        double rps = number(out, "Requests/sec:\\s+([0-9.]+)");
        double p50 = millis(out, "50%");
        double p99 = millis(out, "99%");
        Matcher errors = Pattern.compile("Non-2xx or 3xx responses: (\\d+)").matcher(out);
        Matcher socket = Pattern.compile("Socket errors: connect (\\d+), read (\\d+), write (\\d+), timeout (\\d+)")
                .matcher(out);
        long errorCount = errors.find() ? Long.parseLong(errors.group(1)) : 0;
        if (socket.find()) {
            for (int g = 1; g <= 4; g++) {
                errorCount += Long.parseLong(socket.group(g));
            }
        }
        return new Result(rps, p50, p99, errorCount, CpuTimes.now().stealPercentSince(before));
    }

    private static double number(String text, String regex) {
        Matcher m = Pattern.compile(regex).matcher(text);
        if (!m.find()) {
            throw new IllegalStateException("unexpected wrk output:\n" + text);
        }
        return Double.parseDouble(m.group(1));
    }

    /** A latency percentile line of wrk --latency ("99%    3.21ms") in milliseconds. */
    private static double millis(String text, String percentile) {
        Matcher m = Pattern.compile("\\s" + Pattern.quote(percentile) + "\\s+([0-9.]+)(us|ms|s)").matcher(text);
        if (!m.find()) {
            throw new IllegalStateException("no " + percentile + " latency in wrk output:\n" + text);
        }
        double v = Double.parseDouble(m.group(1));
        return switch (m.group(2)) {
            case "us" -> v / 1000;
            case "s" -> v * 1000;
            default -> v;
        };
    }

    private static String loadAverage() {
        try {
            return Files.readString(Path.of("/proc/loadavg")).trim();
        } catch (IOException e) {
            return String.format(Locale.ROOT, "%.2f", ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage());
        }
    }

    private static String cpuName() {
        try {
            for (String line : Files.readAllLines(Path.of("/proc/cpuinfo"))) {
                if (line.startsWith("model name")) {
                    return line.substring(line.indexOf(':') + 1).trim();
                }
            }
        } catch (IOException e) {
            // not Linux
        }
        return System.getProperty("os.arch");
    }

    /** Random factors, every user and item known, {@value #RATINGS_PER_USER} random rated items per user. */
    static ServingModel syntheticModel(int users, int items, int k, long seed) {
        return SyntheticModel.build(users, items, k, RATINGS_PER_USER, seed, true, false);
    }

    static {
        // keep the benchmark on loopback only
        if (!InetAddress.getLoopbackAddress().getHostAddress().startsWith("127.")) {
            throw new IllegalStateException("loopback is not 127.x");
        }
    }
}
