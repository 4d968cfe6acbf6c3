package dev.twofold.service.ops;

import java.util.Locale;
import java.util.concurrent.ThreadLocalRandom;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.slf4j.MDC;
import org.slf4j.spi.LoggingEventBuilder;

/**
 * Request ids and the one log line written per request.
 *
 * <p>Every request gets an id: the caller's {@value #HEADER} when it is sane (1 to
 * {@value #MAX_ID_LENGTH} characters of letters, digits and {@code . _ : -}, so trace ids and UUIDs
 * pass through), else a fresh random one. The id goes back in the {@value #HEADER} response
 * header, into the logging MDC as {@value #MDC_KEY} while the request runs (so any line logged on
 * its behalf carries it), and into the request line.
 *
 * <p>The request line goes to the logger {@value #LOGGER} at INFO: method, path, status,
 * duration, the route template, the name of the API key the request was admitted with (never the
 * key), the problem type of an error, and the id, also as key-value pairs
 * for the JSON log format. It never contains a header (the {@code Authorization} header in
 * particular), a query string or a body; the path is cut to {@value #MAX_PATH_CHARS} characters
 * and control characters are escaped so one request is always one line.
 */
final class RequestLog {

    static final String HEADER = "X-Request-Id";
    static final String MDC_KEY = "request_id";
    static final String LOGGER = "dev.twofold.request";
    static final int MAX_ID_LENGTH = 64;
    static final int MAX_PATH_CHARS = 200;
    private static final char[] HEX = "0123456789abcdef".toCharArray();

    private final Logger log = LoggerFactory.getLogger(LOGGER);

    /** The caller's id when sane, else a new one. */
    static String idFor(String incoming) {
        return sane(incoming) ? incoming : newId();
    }

    static boolean sane(String id) {
        if (id == null || id.isEmpty() || id.length() > MAX_ID_LENGTH) {
            return false;
        }
        for (int j = 0; j < id.length(); j++) {
            char c = id.charAt(j);
            boolean ok = (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9')
                    || c == '.' || c == '_' || c == ':' || c == '-';
            if (!ok) {
                return false;
            }
        }
        return true;
    }

    /** 64 random bits as 16 hex digits. */
    static String newId() {
        long bits = ThreadLocalRandom.current().nextLong();
        char[] out = new char[16];
        for (int j = 15; j >= 0; j--) {
            out[j] = HEX[(int) (bits & 0xF)];
            bits >>>= 4;
        }
        return new String(out);
    }

    /** Puts the id in the MDC for the rest of the request on this thread. */
    void begin(String id) {
        MDC.put(MDC_KEY, id);
    }

    /**
     * Writes the request line (with the id in the MDC, whichever thread finishes the request) and
     * clears the MDC.
     *
     * @param route       the matched route template, or null
     * @param problemType the problem type of an error response, or null
     * @param caller      the name of the API key the request was admitted with, or null (never the key)
     */
    void finish(String id, String method, String path, String route, int status, float millis, String problemType,
            String caller) {
        try {
            MDC.put(MDC_KEY, id);
            if (log.isInfoEnabled()) {
                String shownPath = printable(path);
                String duration = String.format(Locale.ROOT, "%.2f", millis);
                StringBuilder line = new StringBuilder(96).append(method).append(' ').append(shownPath).append(' ')
                        .append(status).append(' ').append(duration).append(" ms id=").append(id);
                String shownCaller = caller == null ? null : printable(caller);
                if (shownCaller != null) {
                    line.append(" caller=").append(shownCaller);
                }
                if (problemType != null) {
                    line.append(" problem=").append(ServiceMetrics.problemSlug(problemType));
                }
                LoggingEventBuilder event = log.atInfo()
                        .addKeyValue("request_id", id)
                        .addKeyValue("method", method)
                        .addKeyValue("path", shownPath)
                        .addKeyValue("route", route == null ? ServiceMetrics.UNMATCHED_ROUTE : route)
                        .addKeyValue("status", status)
                        .addKeyValue("duration_ms", duration);
                if (shownCaller != null) {
                    event = event.addKeyValue("caller", shownCaller);
                }
                if (problemType != null) {
                    event = event.addKeyValue("problem", ServiceMetrics.problemSlug(problemType));
                }
                event.log(line.toString());
            }
        } finally {
            MDC.remove(MDC_KEY);
        }
    }

    /** The path cut to {@link #MAX_PATH_CHARS}, with control and non-ASCII characters as {@code \\uXXXX}. */
    static String printable(String path) {
        if (path == null) {
            return "";
        }
        int n = Math.min(path.length(), MAX_PATH_CHARS);
        StringBuilder out = null;
        for (int j = 0; j < n; j++) {
            char c = path.charAt(j);
            boolean plain = c >= 0x20 && c < 0x7f && c != '\\';
            if (!plain && out == null) {
                out = new StringBuilder(n + 16).append(path, 0, j);
            }
            if (out != null) {
                if (plain) {
                    out.append(c);
                } else {
                    out.append(String.format(Locale.ROOT, "\\u%04x", (int) c));
                }
            }
        }
        String shown = out == null ? path.substring(0, n) : out.toString();
        return path.length() > MAX_PATH_CHARS ? shown + "..." : shown;
    }
}
