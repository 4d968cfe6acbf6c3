package dev.twofold.db.internal;

import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStreamReader;
import java.nio.charset.StandardCharsets;
import java.util.Arrays;
import java.util.Set;
import java.util.stream.Collectors;

/**
 * A test hook that stops a process at a named point of its work, so a test can kill it there
 * (kill -9) and check what survives. Off unless the JVM runs with {@code -Dtwofold.pauseAt=NAME[,NAME]};
 * then, on reaching a named point, the process writes {@code twofold: paused at NAME} to standard
 * error and waits for a line (or the end) of standard input before it goes on.
 *
 * <p>Points: {@code lock} (retrain lock taken, nothing else done), {@code fit} (after the first
 * training epoch), {@code store-factors} (inside the factor transaction: user rows sent, item rows
 * not), {@code promote} (version finished as candidate, pointer not moved yet),
 * {@code import-write} (import transaction open, rows written, not committed).
 */
public final class PausePoint {

    /** The system property naming the points to pause at. */
    public static final String PROPERTY = "twofold.pauseAt";

    private static final Set<String> PAUSE_AT = Arrays.stream(System.getProperty(PROPERTY, "").split(","))
            .map(String::trim).filter(s -> !s.isEmpty()).collect(Collectors.toUnmodifiableSet());

    private PausePoint() {
    }

    /** Pauses here when the property names this point; otherwise returns at once. */
    public static void reached(String name) {
        if (!PAUSE_AT.contains(name)) {
            return;
        }
        System.err.println("twofold: paused at " + name + " (" + PROPERTY + "); a line on standard input resumes");
        System.err.flush();
        try {
            new BufferedReader(new InputStreamReader(System.in, StandardCharsets.UTF_8)).readLine();
        } catch (IOException e) {
            // standard input is gone: go on
        }
    }
}
