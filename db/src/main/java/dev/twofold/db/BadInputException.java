package dev.twofold.db;

import java.util.List;

/**
 * Input was refused and nothing was written. {@link #problems()} holds one line per problem in
 * the form {@code FILE:LINE: reason} (or {@code [index]: reason} for API batches), at most
 * {@link #MAX_LISTED} of them; {@link #totalProblems()} counts all.
 */
public final class BadInputException extends TwofoldException {
    public static final int MAX_LISTED = 50;

    private final List<String> problems;
    private final long totalProblems;

    public BadInputException(String summary, List<String> problems, long totalProblems) {
        super(summary);
        this.problems = List.copyOf(problems.size() > MAX_LISTED ? problems.subList(0, MAX_LISTED) : problems);
        this.totalProblems = totalProblems;
    }

    public BadInputException(String problem) {
        this(problem, List.of(problem), 1);
    }

    public List<String> problems() {
        return problems;
    }

    public long totalProblems() {
        return totalProblems;
    }

    /** The report a person reads: the listed problems, then how many more were not listed. */
    public String report() {
        StringBuilder out = new StringBuilder(getMessage()).append('\n');
        for (String p : problems) {
            out.append(p).append('\n');
        }
        if (totalProblems > problems.size()) {
            out.append("... and ").append(totalProblems - problems.size()).append(" more problems\n");
        }
        return out.toString();
    }

    @Override
    public int exitCode() {
        return EXIT_DATA_ERROR;
    }
}
