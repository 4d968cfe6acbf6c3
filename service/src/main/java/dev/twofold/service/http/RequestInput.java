package dev.twofold.service.http;

import dev.twofold.db.ingest.FieldRules;
import io.javalin.http.Context;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/**
 * Reads and checks request parameters and bodies against the {@link Limits}; every refusal is a
 * {@link ProblemException} whose detail names the parameter, the value's problem and the allowed
 * range.
 */
final class RequestInput {

    /** Most of a refused body read and dropped so the client sees the answer (8 MiB). */
    static final long DISCARD_BYTES = 8L * Limits.MAX_BODY_BYTES;

    private RequestInput() {
    }

    /** A path or query id, checked to be 1..128 characters. */
    static String id(String name, String value) {
        String problem = idProblem(value);
        if (problem != null) {
            throw new ProblemException(ProblemType.INVALID_PARAMETER, name + " " + problem);
        }
        return value;
    }

    /**
     * Why {@code value} is not a valid id ("has 0 characters; ids have 1..128"), or null when it is.
     * Ids read obey the rules of ids written ({@link FieldRules#id}): an id that could never have been
     * stored is refused with the reason, not answered as an unknown user.
     */
    static String idProblem(String value) {
        int chars = value.codePointCount(0, value.length());
        if (chars < Limits.MIN_ID_CHARS || chars > Limits.MAX_ID_CHARS) {
            return "has " + chars + " characters; ids have " + Limits.MIN_ID_CHARS + ".." + Limits.MAX_ID_CHARS;
        }
        try {
            FieldRules.id("id", value);
            return null;
        } catch (FieldRules.Refused e) {
            return e.getMessage();
        }
    }

    /** Query parameter {@code count}: {@link Limits#DEFAULT_COUNT} when absent, else an integer in 1..1000. */
    static int count(Context ctx) {
        String raw = ctx.queryParam("count");
        if (raw == null) {
            return Limits.DEFAULT_COUNT;
        }
        int count;
        try {
            // Integer.parseInt also reads digits of other scripts ("１０"); the contract's integer is ASCII.
            String digits = raw.trim();
            count = digits.chars().allMatch(c -> c < 128) ? Integer.parseInt(digits) : Integer.MIN_VALUE;
        } catch (NumberFormatException e) {
            count = Integer.MIN_VALUE;
        }
        if (count < Limits.MIN_COUNT || count > Limits.MAX_COUNT) {
            throw new ProblemException(ProblemType.INVALID_PARAMETER, "count must be an integer in "
                    + Limits.MIN_COUNT + ".." + Limits.MAX_COUNT + "; got '" + shorten(raw) + "'");
        }
        return count;
    }

    /**
     * Query parameter {@code name} as a list of ids, separated by commas and/or given as repeated
     * parameters; an empty parameter means no ids.
     */
    static List<String> idList(Context ctx, String name) {
        List<String> ids = new ArrayList<>();
        for (String value : ctx.queryParams(name)) {
            if (value.isEmpty()) {
                continue;
            }
            for (String id : value.split(",", -1)) {
                String problem = idProblem(id);
                if (problem != null) {
                    throw new ProblemException(ProblemType.INVALID_PARAMETER, name + " id #" + (ids.size() + 1)
                            + " ('" + shorten(id) + "') " + problem);
                }
                ids.add(id);
            }
        }
        return ids;
    }

    /**
     * The request body, which must be declared JSON and at most {@link Limits#MAX_BODY_BYTES}. A
     * declared Content-Length over the limit is refused without keeping the body; otherwise
     * reading stops one byte past the limit. Either way the rest of a refused body is read and
     * dropped, up to {@link #DISCARD_BYTES}: a server that answers and closes while the client is
     * still sending makes the client's TCP stack reset the connection, and the client may then
     * never see the 413 (measured: 6 of 300 such requests on loopback). A body beyond that is cut
     * off with the connection.
     */
    static byte[] jsonBody(Context ctx) {
        String type = ctx.contentType();
        if (type == null || !isJson(type)) {
            throw new ProblemException(ProblemType.UNSUPPORTED_MEDIA_TYPE, "send the body as application/json; got "
                    + (type == null ? "no Content-Type" : "Content-Type '" + shorten(type) + "'"));
        }
        long declared = ctx.req().getContentLengthLong();
        try (InputStream in = ctx.req().getInputStream()) {
            if (declared > Limits.MAX_BODY_BYTES) {
                discard(in, declared);
                throw tooLarge(declared + " bytes");
            }
            ByteArrayOutputStream out = new ByteArrayOutputStream(declared > 0 ? (int) declared : 8192);
            byte[] buffer = new byte[8192];
            int n;
            while ((n = in.read(buffer)) != -1) {
                out.write(buffer, 0, n);
                if (out.size() > Limits.MAX_BODY_BYTES) {
                    discard(in, DISCARD_BYTES);
                    throw tooLarge("more than " + Limits.MAX_BODY_BYTES + " bytes");
                }
            }
            return out.toByteArray();
        } catch (IOException e) {
            throw new ProblemException(ProblemType.INVALID_BODY, "the request body could not be read to its end ("
                    + e.getMessage() + "); send it again");
        }
    }

    /** Reads and drops what is left of a refused body when it is at most {@link #DISCARD_BYTES}. */
    private static void discard(InputStream in, long declared) {
        if (declared > DISCARD_BYTES) {
            return;
        }
        byte[] buffer = new byte[8192];
        long left = DISCARD_BYTES;
        try {
            int n;
            while (left > 0 && (n = in.read(buffer)) != -1) {
                left -= n;
            }
        } catch (IOException e) {
            // the client went away; the refusal stands
        }
    }

    private static boolean isJson(String contentType) {
        String media = contentType.split(";", 2)[0].trim().toLowerCase(Locale.ROOT);
        return media.equals("application/json") || (media.startsWith("application/") && media.endsWith("+json"));
    }

    private static ProblemException tooLarge(String size) {
        return new ProblemException(ProblemType.BODY_TOO_LARGE, "the request body has " + size + "; at most "
                + Limits.MAX_BODY_BYTES + " bytes (1 MiB) are accepted");
    }

    /** A client's value quoted in a detail: cut to a readable length, never inside a character, control characters as '?'. */
    static String shorten(String value) {
        return FieldRules.printable(value);
    }
}
