package dev.twofold.db.access;

import java.util.Locale;

/**
 * What an API key may do. Roles are ordered: {@code admin} may do what {@code write} may, which
 * may do what {@code read} may.
 * <ul>
 *   <li>{@link #READ}: recommendations, predictions, similar items;</li>
 *   <li>{@link #WRITE}: also send ratings and trust edges;</li>
 *   <li>{@link #ADMIN}: also list, promote and roll back models and erase users.</li>
 * </ul>
 */
public enum KeyRole {
    READ, WRITE, ADMIN;

    /** Whether a key with this role may call something that needs {@code needed}. */
    public boolean allows(KeyRole needed) {
        return compareTo(needed) >= 0;
    }

    public String label() {
        return name().toLowerCase(Locale.ROOT);
    }

    /** Parses {@code read}, {@code write} or {@code admin}; anything else is an {@link IllegalArgumentException} naming them. */
    public static KeyRole parse(String text) {
        for (KeyRole r : values()) {
            if (r.label().equals(text)) {
                return r;
            }
        }
        throw new IllegalArgumentException("role '" + text + "' is not one of read, write, admin");
    }
}
