package dev.twofold.service.http;

import com.fasterxml.jackson.core.JsonLocation;
import com.fasterxml.jackson.core.JsonParser;
import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.core.JsonToken;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.util.Arrays;

/**
 * The body of {@code POST /v1/predictions}, {@code {"pairs":[{"user":"…","item":"…"}, …]}},
 * parsed in one streaming pass into two parallel id arrays.
 *
 * <p>Refusals say where: malformed JSON gives line and column ({@link ProblemType#MALFORMED_JSON});
 * well-formed JSON of the wrong shape gives a JSON Pointer such as {@code /pairs/3/item}
 * ({@link ProblemType#INVALID_BODY}); more than {@link Limits#MAX_BATCH_ROWS} pairs is
 * {@link ProblemType#BATCH_TOO_LARGE}. Unknown fields are refused, so a misspelt field is not
 * silently ignored.
 */
record PredictionBatch(String[] users, String[] items) {

    int size() {
        return users.length;
    }

    static PredictionBatch parse(byte[] body) {
        try (JsonParser json = JsonOutput.FACTORY.createParser(body)) {
            return read(json);
        } catch (JsonProcessingException e) {
            JsonLocation at = e.getLocation();
            String where = at == null ? "" : " at line " + at.getLineNr() + ", column " + at.getColumnNr();
            throw new ProblemException(ProblemType.MALFORMED_JSON, "the body is not valid JSON" + where + ": "
                    + e.getOriginalMessage());
        } catch (IOException e) {
            throw new UncheckedIOException("parsing a request body held in memory", e);
        }
    }

    private static PredictionBatch read(JsonParser json) throws IOException {
        if (json.nextToken() != JsonToken.START_OBJECT) {
            throw invalid("", "the body must be a JSON object {\"pairs\": [{\"user\": …, \"item\": …}, …]}");
        }
        String[] users = null;
        String[] items = null;
        while (json.nextToken() == JsonToken.FIELD_NAME) {
            String field = json.currentName();
            JsonToken value = json.nextToken();
            if (!field.equals("pairs")) {
                throw invalid("/" + segment(field), "is not a known field; the body has only \"pairs\"");
            }
            if (value != JsonToken.START_ARRAY) {
                throw invalid("/pairs", "must be an array of {\"user\": …, \"item\": …} objects");
            }
            String[][] pairs = readPairs(json);
            users = pairs[0];
            items = pairs[1];
        }
        if (json.nextToken() != null) {
            throw invalid("", "the body must hold one JSON object and nothing after it");
        }
        if (users == null) {
            throw invalid("/pairs", "is missing; send {\"pairs\": [{\"user\": …, \"item\": …}, …]}");
        }
        return new PredictionBatch(users, items);
    }

    private static String[][] readPairs(JsonParser json) throws IOException {
        String[] users = new String[16];
        String[] items = new String[16];
        int n = 0;
        JsonToken token;
        while ((token = json.nextToken()) != JsonToken.END_ARRAY) {
            if (n == Limits.MAX_BATCH_ROWS) {
                throw new ProblemException(ProblemType.BATCH_TOO_LARGE, "pairs has more than " + Limits.MAX_BATCH_ROWS
                        + " entries; send at most " + Limits.MAX_BATCH_ROWS + " per request");
            }
            String at = "/pairs/" + n;
            if (token != JsonToken.START_OBJECT) {
                throw invalid(at, "must be an object {\"user\": …, \"item\": …}");
            }
            String user = null;
            String item = null;
            while (json.nextToken() == JsonToken.FIELD_NAME) {
                String field = json.currentName();
                JsonToken value = json.nextToken();
                if (!field.equals("user") && !field.equals("item")) {
                    throw invalid(at + "/" + segment(field), "is not a known field; a pair has \"user\" and \"item\"");
                }
                if (value != JsonToken.VALUE_STRING) {
                    throw invalid(at + "/" + field, "must be a string id");
                }
                String id = json.getText();
                String problem = RequestInput.idProblem(id);
                if (problem != null) {
                    throw invalid(at + "/" + field, problem);
                }
                if (field.equals("user")) {
                    user = id;
                } else {
                    item = id;
                }
            }
            if (user == null || item == null) {
                throw invalid(at + (user == null ? "/user" : "/item"), "is missing");
            }
            if (n == users.length) {
                users = Arrays.copyOf(users, Math.min(Limits.MAX_BATCH_ROWS, 2 * n));
                items = Arrays.copyOf(items, users.length);
            }
            users[n] = user;
            items[n] = item;
            n++;
        }
        return new String[][] {Arrays.copyOf(users, n), Arrays.copyOf(items, n)};
    }

    /** A field name as a JSON Pointer segment (RFC 6901: ~ as ~0, / as ~1), shortened for the detail. */
    private static String segment(String field) {
        return RequestInput.shorten(field).replace("~", "~0").replace("/", "~1");
    }

    private static ProblemException invalid(String pointer, String problem) {
        String where = pointer.isEmpty() ? "" : pointer + " ";
        return new ProblemException(ProblemType.INVALID_BODY, where + problem);
    }
}
