package dev.twofold.db.connect;

import java.nio.file.Path;
import java.util.Map;

/**
 * Where the database is. With a JDBC URL Twofold uses that external PostgreSQL; without one it
 * runs (or joins) an embedded PostgreSQL whose files live in {@code dataDir}.
 *
 * @param url      {@code TWOFOLD_DB_URL}, or null for the embedded server
 * @param user     {@code TWOFOLD_DB_USER}
 * @param password {@code TWOFOLD_DB_PASSWORD}; never logged
 * @param dataDir  {@code TWOFOLD_DATA_DIR}, default {@code ./twofold-data}
 * @param poolSize connections in the pool (at least 2: Flyway needs two)
 */
public record DatabaseSettings(String url, String user, String password, Path dataDir, int poolSize) {

    public static final String DEFAULT_DATA_DIR = "./twofold-data";
    public static final int DEFAULT_POOL_SIZE = 8;

    /** Reads and validates the {@code TWOFOLD_DB_*} and {@code TWOFOLD_DATA_DIR} variables. */
    public static DatabaseSettings fromEnvironment(Map<String, String> env) {
        throw new UnsupportedOperationException("db helper implements this");
    }

    public boolean embedded() {
        return url == null;
    }

    @Override
    public String toString() {
        return "DatabaseSettings[url=" + url + ", user=" + user + ", password=" + (password == null ? "none" : "****")
                + ", dataDir=" + dataDir + ", poolSize=" + poolSize + "]";
    }
}
