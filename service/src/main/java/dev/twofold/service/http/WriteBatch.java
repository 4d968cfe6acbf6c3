package dev.twofold.service.http;

import com.fasterxml.jackson.core.JsonLocation;
import com.fasterxml.jackson.core.JsonParser;
import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.core.JsonToken;
import dev.twofold.db.BadInputException;
import dev.twofold.db.ingest.FieldRules;
import dev.twofold.db.ingest.RatingInput;
import dev.twofold.db.ingest.RatingScale;
import dev.twofold.db.ingest.TrustInput;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.time.Instant;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
import java.util.Set;

/**
 * The bodies of {@code POST /v1/ratings} and {@code POST /v1/trust}: a JSON array of rows with the
 * fields of the CSV files ({@code user, item, rating[, time]}; {@code truster, trustee[, weight]}),
 * parsed in one streaming pass.
 *
 * <p>Every row is checked before anything is written, with the importer's rules
 * ({@link FieldRules}); all problems are reported together, one line per problem in the form
 * {@code [index]: reason} ({@link BadInputException}, a 400 with {@code errors}). Malformed JSON
 * stops at the first error with its line and column; more than {@link Limits#MAX_BATCH_ROWS} rows
 * is {@link ProblemType#BATCH_TOO_LARGE}; an empty array is refused.
 */
final class WriteBatch {

    private WriteBatch() {
    }

    static List<RatingInput> ratings(byte[] body, RatingScale scale) {
        Problems problems = new Problems();
        List<RatingInput> rows = new ArrayList<>();
        readArray(body, "ratings", (json, index) -> {
            String user = null;
            String item = null;
            Double rating = null;
            Instant time = null;
            boolean ok = true;
            Set<String> present = new HashSet<>();
            while (json.nextToken() == JsonToken.FIELD_NAME) {
                String field = json.currentName();
                JsonToken value = json.nextToken();
                present.add(field);
                try {
                    switch (field) {
                        case "user" -> user = id(json, value, "user");
                        case "item" -> item = id(json, value, "item");
                        case "rating" -> rating = (double) FieldRules.rating(number(json, value, "rating"), scale);
                        case "time" -> time = time(json, value);
                        default -> {
                            json.skipChildren();
                            throw refused("'" + RequestInput.shorten(field) + "' is not a field of a rating; use user,"
                                    + " item, rating and optionally time");
                        }
                    }
                } catch (FieldRules.Refused e) {
                    problems.add(index, e.getMessage());
                    ok = false;
                }
            }
            ok &= require(problems, index, present, "user") & require(problems, index, present, "item")
                    & require(problems, index, present, "rating");
            if (ok) {
                rows.add(new RatingInput(user, item, rating, time));
            }
        }, problems);
        return problems.refuseOr("ratings", rows);
    }

    static List<TrustInput> trust(byte[] body) {
        Problems problems = new Problems();
        List<TrustInput> rows = new ArrayList<>();
        readArray(body, "trust", (json, index) -> {
            String truster = null;
            String trustee = null;
            double weight = TrustInput.DEFAULT_WEIGHT;
            boolean ok = true;
            Set<String> present = new HashSet<>();
            while (json.nextToken() == JsonToken.FIELD_NAME) {
                String field = json.currentName();
                JsonToken value = json.nextToken();
                present.add(field);
                try {
                    switch (field) {
                        case "truster" -> truster = id(json, value, "truster");
                        case "trustee" -> trustee = id(json, value, "trustee");
                        case "weight" -> weight = value == JsonToken.VALUE_NULL ? TrustInput.DEFAULT_WEIGHT
                                : FieldRules.weight(number(json, value, "weight"));
                        default -> {
                            json.skipChildren();
                            throw refused("'" + RequestInput.shorten(field) + "' is not a field of a trust edge; use"
                                    + " truster, trustee and optionally weight");
                        }
                    }
                } catch (FieldRules.Refused e) {
                    problems.add(index, e.getMessage());
                    ok = false;
                }
            }
            ok &= require(problems, index, present, "truster") & require(problems, index, present, "trustee");
            if (ok) {
                try {
                    FieldRules.notSelfTrust(truster, trustee);
                    rows.add(new TrustInput(truster, trustee, weight));
                } catch (FieldRules.Refused e) {
                    problems.add(index, e.getMessage());
                }
            }
        }, problems);
        return problems.refuseOr("trust", rows);
    }

    @FunctionalInterface
    private interface RowReader {
        /** Reads the fields of one row; the parser stands on its START_OBJECT and must end on its END_OBJECT. */
        void read(JsonParser json, int index) throws IOException;
    }

    private static void readArray(byte[] body, String what, RowReader rows, Problems problems) {
        try (JsonParser json = JsonOutput.FACTORY.createParser(body)) {
            if (json.nextToken() != JsonToken.START_ARRAY) {
                throw new ProblemException(ProblemType.INVALID_BODY, "the body must be a JSON array of " + what
                        + " rows, like the lines of the " + what + " CSV file");
            }
            int index = 0;
            JsonToken token;
            while ((token = json.nextToken()) != JsonToken.END_ARRAY) {
                if (index == Limits.MAX_BATCH_ROWS) {
                    throw new ProblemException(ProblemType.BATCH_TOO_LARGE, "the batch has more than "
                            + Limits.MAX_BATCH_ROWS + " rows; send at most " + Limits.MAX_BATCH_ROWS + " per request");
                }
                if (token == JsonToken.START_OBJECT) {
                    rows.read(json, index);
                } else {
                    json.skipChildren();
                    problems.add(index, "is " + describe(token) + ", not an object");
                }
                index++;
            }
            if (json.nextToken() != null) {
                throw new ProblemException(ProblemType.INVALID_BODY, "the body must hold one JSON array and nothing"
                        + " after it");
            }
            if (index == 0) {
                throw new ProblemException(ProblemType.INVALID_BODY, "the batch is empty; send 1.."
                        + Limits.MAX_BATCH_ROWS + " rows");
            }
        } catch (JsonProcessingException e) {
            JsonLocation at = e.getLocation();
            String where = at == null ? "" : " at line " + at.getLineNr() + ", column " + at.getColumnNr();
            throw new ProblemException(ProblemType.MALFORMED_JSON, "the body is not valid JSON" + where + ": "
                    + e.getOriginalMessage());
        } catch (IOException e) {
            throw new UncheckedIOException("parsing a request body held in memory", e);
        }
    }

    private static String id(JsonParser json, JsonToken value, String field) throws IOException, FieldRules.Refused {
        if (value != JsonToken.VALUE_STRING) {
            json.skipChildren();
            throw refused(field + " must be a string, not " + describe(value));
        }
        String id = json.getText();
        FieldRules.id(field, id);
        return id;
    }

    private static double number(JsonParser json, JsonToken value, String field) throws IOException,
            FieldRules.Refused {
        if (value != JsonToken.VALUE_NUMBER_INT && value != JsonToken.VALUE_NUMBER_FLOAT) {
            json.skipChildren();
            throw refused(field + " must be a number, not " + describe(value));
        }
        return json.getDoubleValue();
    }

    /** Epoch seconds as a number or a string, or ISO-8601 with an offset as a string; null for none. */
    private static Instant time(JsonParser json, JsonToken value) throws IOException, FieldRules.Refused {
        return switch (value) {
            case VALUE_NULL -> null;
            case VALUE_NUMBER_INT, VALUE_NUMBER_FLOAT, VALUE_STRING -> FieldRules.parseTime(json.getText());
            default -> {
                json.skipChildren();
                throw refused("time must be epoch seconds or an ISO-8601 string, not " + describe(value));
            }
        };
    }

    /** Reports a required field that the row does not have at all (a present but invalid one is reported already). */
    private static boolean require(Problems problems, int index, Set<String> present, String field) {
        if (!present.contains(field)) {
            problems.add(index, field + " is missing");
            return false;
        }
        return true;
    }

    private static FieldRules.Refused refused(String message) {
        return new FieldRules.Refused(message);
    }

    private static String describe(JsonToken token) {
        return switch (token) {
            case START_OBJECT -> "an object";
            case START_ARRAY -> "an array";
            case VALUE_STRING -> "a string";
            case VALUE_NUMBER_INT, VALUE_NUMBER_FLOAT -> "a number";
            case VALUE_TRUE, VALUE_FALSE -> "a boolean";
            case VALUE_NULL -> "null";
            default -> token.asString();
        };
    }

    /** Problems of a batch: the first {@link BadInputException#MAX_LISTED} kept, all counted. */
    private static final class Problems {
        final List<String> listed = new ArrayList<>();
        long total;

        void add(int index, String reason) {
            total++;
            if (listed.size() < BadInputException.MAX_LISTED) {
                listed.add("[" + index + "]: " + reason);
            }
        }

        <T> List<T> refuseOr(String what, List<T> rows) {
            if (total == 0) {
                return rows;
            }
            throw new BadInputException(what + " batch refused: " + total + (total == 1 ? " problem" : " problems")
                    + ", nothing was written", listed, total);
        }
    }
}
