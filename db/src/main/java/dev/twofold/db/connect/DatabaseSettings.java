package dev.twofold.db.connect;

import dev.twofold.db.ConfigurationException;
import java.nio.file.InvalidPathException;
import java.nio.file.Path;
import java.util.Map;

/**
 * Where the database is. With a JDBC URL Twofold uses that external PostgreSQL; without one it
 * runs (or joins) an embedded PostgreSQL whose files live in {@code dataDir}.
 *
 * <p>For the embedded server {@code user} and {@code password} are not used: the server is created
 * with its own superuser whose generated password is kept in the data directory.
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
    public static final int MIN_POOL_SIZE = 2;
    public static final int MAX_POOL_SIZE = 64;

    public static final String ENV_URL = "TWOFOLD_DB_URL";
    public static final String ENV_USER = "TWOFOLD_DB_USER";
    public static final String ENV_PASSWORD = "TWOFOLD_DB_PASSWORD";
    public static final String ENV_DATA_DIR = "TWOFOLD_DATA_DIR";
    public static final String ENV_POOL_SIZE = "TWOFOLD_DB_POOL_SIZE";

    static final String URL_PREFIX = "jdbc:postgresql://";

    public DatabaseSettings {
        if (url != null) {
            requireValidUrl(url, "url");
        }
        if (dataDir == null) {
            throw new IllegalArgumentException("dataDir must be given (default " + DEFAULT_DATA_DIR + ")");
        }
        if (poolSize < MIN_POOL_SIZE || poolSize > MAX_POOL_SIZE) {
            throw new IllegalArgumentException("poolSize " + poolSize + " is outside " + MIN_POOL_SIZE + ".." + MAX_POOL_SIZE);
        }
    }

    /** Settings for the embedded server in {@code dataDir} with the default pool size. */
    public static DatabaseSettings embedded(Path dataDir) {
        return new DatabaseSettings(null, null, null, dataDir, DEFAULT_POOL_SIZE);
    }

    /** Settings for an external server. */
    public static DatabaseSettings external(String url, String user, String password) {
        return new DatabaseSettings(url, user, password, Path.of(DEFAULT_DATA_DIR), DEFAULT_POOL_SIZE);
    }

    /**
     * Reads and validates the {@code TWOFOLD_DB_*} and {@code TWOFOLD_DATA_DIR} variables.
     *
     * @throws ConfigurationException naming the variable, its value (never the password) and what is allowed
     */
    public static DatabaseSettings fromEnvironment(Map<String, String> env) {
        String url = blankToNull(env.get(ENV_URL));
        if (url != null && !url.startsWith(URL_PREFIX)) {
            throw new ConfigurationException(ENV_URL + "=" + redact(url) + " is not a PostgreSQL JDBC URL: it must start with "
                    + URL_PREFIX + " (for example jdbc:postgresql://127.0.0.1:5432/twofold); leave it unset to use the embedded server");
        }
        if (url != null && url.length() == URL_PREFIX.length()) {
            throw new ConfigurationException(ENV_URL + "=" + redact(url) + " names no host: use jdbc:postgresql://HOST:PORT/DATABASE");
        }
        String user = blankToNull(env.get(ENV_USER));
        String password = env.get(ENV_PASSWORD);
        if (url == null && (user != null || password != null)) {
            // Harmless but probably a mistake; the embedded server keeps its own credentials.
            user = null;
            password = null;
        }
        String dir = blankToNull(env.get(ENV_DATA_DIR));
        Path dataDir;
        try {
            dataDir = Path.of(dir == null ? DEFAULT_DATA_DIR : dir);
        } catch (InvalidPathException e) {
            throw new ConfigurationException(ENV_DATA_DIR + "=" + dir + " is not a usable path: " + e.getReason());
        }
        String pool = blankToNull(env.get(ENV_POOL_SIZE));
        int poolSize = DEFAULT_POOL_SIZE;
        if (pool != null) {
            try {
                poolSize = Integer.parseInt(pool.trim());
            } catch (NumberFormatException e) {
                throw new ConfigurationException(ENV_POOL_SIZE + "=" + pool + " is not a whole number; allowed "
                        + MIN_POOL_SIZE + ".." + MAX_POOL_SIZE + " (default " + DEFAULT_POOL_SIZE + ")");
            }
            if (poolSize < MIN_POOL_SIZE || poolSize > MAX_POOL_SIZE) {
                throw new ConfigurationException(ENV_POOL_SIZE + "=" + pool + " is outside the allowed range "
                        + MIN_POOL_SIZE + ".." + MAX_POOL_SIZE + " (default " + DEFAULT_POOL_SIZE + ")");
            }
        }
        return new DatabaseSettings(url, user, password, dataDir, poolSize);
    }

    public boolean embedded() {
        return url == null;
    }

    /** The same settings with another pool size. */
    public DatabaseSettings withPoolSize(int size) {
        return new DatabaseSettings(url, user, password, dataDir, size);
    }

    @Override
    public String toString() {
        return "DatabaseSettings[url=" + redact(url) + ", user=" + user + ", password=" + (password == null ? "none" : "****")
                + ", dataDir=" + dataDir + ", poolSize=" + poolSize + "]";
    }

    /** The URL with any {@code password=} parameter masked, safe for logs. */
    static String redact(String url) {
        return url == null ? null : url.replaceAll("(?i)(password=)[^&]*", "$1****");
    }

    private static void requireValidUrl(String url, String what) {
        if (!url.startsWith(URL_PREFIX)) {
            throw new IllegalArgumentException(what + " " + url + " must start with " + URL_PREFIX);
        }
    }

    private static String blankToNull(String s) {
        return s == null || s.isBlank() ? null : s;
    }
}
