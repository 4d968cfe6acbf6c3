package dev.twofold.service.scoring;

/** How a user's recommendations were made; {@link #wireName()} is the value clients see. */
public enum Strategy {
    /** Ranked by the user's own learned factors. */
    MODEL("model"),
    /** No factors of their own, but they trust users who have: served from those users' factors. */
    TRUST("trust"),
    /** Nothing usable is known about the user: the most popular items they have not rated. */
    POPULAR("popular");

    private final String wireName;

    Strategy(String wireName) {
        this.wireName = wireName;
    }

    public String wireName() {
        return wireName;
    }
}
