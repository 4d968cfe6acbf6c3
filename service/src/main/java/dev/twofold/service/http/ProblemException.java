package dev.twofold.service.http;

import dev.twofold.db.TwofoldException;
import java.util.Map;

/**
 * A request the API refuses, as the problem it reports: its type, a detail saying what was wrong
 * and where, and any response headers it needs (Retry-After, WWW-Authenticate). Thrown anywhere
 * under a route; {@link Problems} turns it into the response.
 */
public final class ProblemException extends TwofoldException {

    private final ProblemType type;
    private final Map<String, String> headers;

    public ProblemException(ProblemType type, String detail) {
        this(type, detail, Map.of());
    }

    public ProblemException(ProblemType type, String detail, Map<String, String> headers) {
        super(detail);
        this.type = type;
        this.headers = Map.copyOf(headers);
    }

    public ProblemType type() {
        return type;
    }

    public String detail() {
        return getMessage();
    }

    public Map<String, String> headers() {
        return headers;
    }

    @Override
    public int exitCode() {
        int status = type.status();
        if (status == 503) {
            return EXIT_UNAVAILABLE;
        }
        return status < 500 ? EXIT_DATA_ERROR : EXIT_SOFTWARE;
    }
}
