package dev.twofold.db.ingest;

import java.time.Instant;

/**
 * One rating sent by the product backend.
 *
 * @param user   external user id
 * @param item   external item id
 * @param rating the rating, inside the scale
 * @param time   when it was given, or null when unknown (parse text with {@link FieldRules#parseTime})
 */
public record RatingInput(String user, String item, double rating, Instant time) {
    public RatingInput(String user, String item, double rating) {
        this(user, item, rating, null);
    }
}
