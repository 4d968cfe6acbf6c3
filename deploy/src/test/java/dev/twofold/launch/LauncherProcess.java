package dev.twofold.launch;

import java.io.IOException;
import java.net.ServerSocket;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.concurrent.TimeUnit;

/**
 * Runs the shaded jar ({@code deploy/target/twofold.jar}) as a separate process, the way
 * {@code deploy/twofold} does, with a controlled environment and captured output.
 */
final class LauncherProcess implements AutoCloseable {

    static final Duration COMMAND_TIMEOUT = Duration.ofMinutes(3);
    static final Duration READY_TIMEOUT = Duration.ofMinutes(2);

    private final Process process;
    private final Path stdout;
    private final Path stderr;

    private LauncherProcess(Process process, Path stdout, Path stderr) {
        this.process = process;
        this.stdout = stdout;
        this.stderr = stderr;
    }

    static Path jar() {
        Path jar = Path.of("target", "twofold.jar").toAbsolutePath();
        if (!Files.isRegularFile(jar)) {
            throw new IllegalStateException(jar + " is missing: these tests run after `mvn package` (failsafe)");
        }
        return jar;
    }

    /** Starts {@code twofold args...} with the current environment minus TWOFOLD_*, plus {@code env}. */
    static LauncherProcess start(Map<String, String> env, Path workDir, String... args) throws IOException {
        return start(List.of(), env, workDir, args);
    }

    /** As {@link #start(Map, Path, String...)} with JVM options before {@code -jar} (e.g. {@code -Dtwofold.pauseAt=fit}). */
    static LauncherProcess start(List<String> jvmOptions, Map<String, String> env, Path workDir, String... args)
            throws IOException {
        List<String> command = new ArrayList<>();
        command.add(ProcessHandle.current().info().command().orElse("java"));
        command.add("--add-modules"); // as deploy/twofold runs it: the SIMD scoring kernel
        command.add("jdk.incubator.vector");
        command.addAll(jvmOptions);
        command.add("-jar");
        command.add(jar().toString());
        command.addAll(List.of(args));
        ProcessBuilder builder = new ProcessBuilder(command).directory(workDir.toFile());
        Map<String, String> environment = builder.environment();
        environment.keySet().removeIf(k -> k.startsWith("TWOFOLD_"));
        environment.putAll(env);
        Path out = Files.createTempFile(workDir, "stdout", ".txt");
        Path err = Files.createTempFile(workDir, "stderr", ".txt");
        builder.redirectOutput(out.toFile()).redirectError(err.toFile());
        return new LauncherProcess(builder.start(), out, err);
    }

    /** Runs a command to its end and returns it. */
    static LauncherProcess run(Map<String, String> env, Path workDir, String... args) throws Exception {
        LauncherProcess p = start(env, workDir, args);
        if (!p.process.waitFor(COMMAND_TIMEOUT.toSeconds(), TimeUnit.SECONDS)) {
            p.close();
            throw new AssertionError("twofold " + String.join(" ", args) + " did not finish in " + COMMAND_TIMEOUT
                    + "\n" + p.stderr());
        }
        return p;
    }

    int exitCode() {
        return process.exitValue();
    }

    long pid() {
        return process.pid();
    }

    boolean isAlive() {
        return process.isAlive();
    }

    /** Waits for the process to end by itself and returns its exit code. */
    int await() throws Exception {
        if (!process.waitFor(COMMAND_TIMEOUT.toSeconds(), TimeUnit.SECONDS)) {
            throw new AssertionError("did not finish in " + COMMAND_TIMEOUT + "\n" + describe());
        }
        return process.exitValue();
    }

    /** Waits until standard error contains {@code text}; fails if the process ends first or the timeout passes. */
    void awaitStderr(String text) throws Exception {
        long deadline = System.nanoTime() + READY_TIMEOUT.toNanos();
        while (System.nanoTime() < deadline) {
            if (stderr().contains(text)) {
                return;
            }
            if (!process.isAlive()) {
                throw new AssertionError("the process ended before writing '" + text + "'\n" + describe());
            }
            Thread.sleep(50);
        }
        throw new AssertionError("'" + text + "' not written within " + READY_TIMEOUT + "\n" + describe());
    }

    /** Writes a line to the process's standard input (resumes a process paused at a test pause point). */
    void resume() throws IOException {
        process.getOutputStream().write('\n');
        process.getOutputStream().flush();
    }

    /** What a process killed by SIGKILL exits with: 128 + 9. */
    static final int EXIT_AFTER_SIGKILL = 137;

    /** kill -9: no shutdown hook, no finally block, sockets closed by the kernel. Returns the exit code. */
    int killHard() throws Exception {
        process.destroyForcibly();
        if (!process.waitFor(30, TimeUnit.SECONDS)) {
            throw new AssertionError("still alive 30 s after SIGKILL");
        }
        return process.exitValue();
    }

    String stdout() throws IOException {
        return Files.readString(stdout, StandardCharsets.UTF_8);
    }

    String stderr() throws IOException {
        return Files.readString(stderr, StandardCharsets.UTF_8);
    }

    String describe() throws IOException {
        return "exit " + (process.isAlive() ? "(running)" : exitCode()) + "\n--- stdout\n" + stdout() + "\n--- stderr\n"
                + stderr();
    }

    /** Polls {@code url} until it answers 200 or the process dies or the timeout passes. */
    void awaitReady(HttpClient http, String url) throws Exception {
        long deadline = System.nanoTime() + READY_TIMEOUT.toNanos();
        while (System.nanoTime() < deadline) {
            if (!process.isAlive()) {
                throw new AssertionError("the process ended before it was ready\n" + describe());
            }
            try {
                HttpResponse<String> r = http.send(HttpRequest.newBuilder(URI.create(url)).timeout(Duration.ofSeconds(2))
                        .build(), HttpResponse.BodyHandlers.ofString());
                if (r.statusCode() == 200) {
                    return;
                }
            } catch (IOException notYet) {
                // not listening yet
            }
            Thread.sleep(200);
        }
        throw new AssertionError("not ready within " + READY_TIMEOUT + "\n" + describe());
    }

    /** What a JVM returns after SIGTERM once its shutdown hooks have finished: 128 + 15. */
    static final int EXIT_AFTER_SIGTERM = 143;

    /** Sends SIGTERM (a graceful stop) and waits for the exit code. */
    int terminate() throws Exception {
        process.destroy();
        if (!process.waitFor(30, TimeUnit.SECONDS)) {
            process.destroyForcibly();
            throw new AssertionError("did not stop within 30 s of SIGTERM\n" + describe());
        }
        return process.exitValue();
    }

    static int freePort() throws IOException {
        try (ServerSocket s = new ServerSocket(0, 1, java.net.InetAddress.getLoopbackAddress())) {
            return s.getLocalPort();
        }
    }

    static Map<String, String> env(Map<String, String> base, String... pairs) {
        Map<String, String> env = new HashMap<>(base);
        for (int i = 0; i < pairs.length; i += 2) {
            env.put(pairs[i], pairs[i + 1]);
        }
        return env;
    }

    @Override
    public void close() {
        if (process.isAlive()) {
            process.destroyForcibly();
        }
    }
}
