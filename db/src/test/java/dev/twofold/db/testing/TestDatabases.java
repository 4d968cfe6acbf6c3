package dev.twofold.db.testing;

import dev.twofold.db.connect.Database;

/**
 * Real PostgreSQL for tests, found in this order: {@code TEST_JDBC_URL} (with {@code TEST_JDBC_USER},
 * {@code TEST_JDBC_PASSWORD}), a Docker engine through Testcontainers, else an embedded server
 * started once per JVM. {@link #fresh()} creates a new, empty, migrated database on that server so
 * test classes never see each other's rows.
 */
public final class TestDatabases {

    private TestDatabases() {
    }

    /** A new empty database with the Twofold schema applied; close it when the test class ends. */
    public static Database fresh() {
        throw new UnsupportedOperationException("db helper implements this");
    }
}
