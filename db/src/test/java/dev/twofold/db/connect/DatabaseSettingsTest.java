package dev.twofold.db.connect;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.ConfigurationException;
import dev.twofold.db.TwofoldException;
import java.nio.file.Path;
import java.util.Map;
import org.junit.jupiter.api.Test;

class DatabaseSettingsTest {

    @Test
    void no_variables_mean_the_embedded_server_in_the_default_directory() {
        DatabaseSettings s = DatabaseSettings.fromEnvironment(Map.of());
        assertTrue(s.embedded());
        assertEquals(Path.of("./twofold-data"), s.dataDir());
        assertEquals(8, s.poolSize());
    }

    @Test
    void an_external_url_with_credentials_is_taken_as_given() {
        DatabaseSettings s = DatabaseSettings.fromEnvironment(Map.of(
                "TWOFOLD_DB_URL", "jdbc:postgresql://127.0.0.1:5432/twofold",
                "TWOFOLD_DB_USER", "cook", "TWOFOLD_DB_PASSWORD", "s3cret",
                "TWOFOLD_DATA_DIR", "/var/lib/twofold", "TWOFOLD_DB_POOL_SIZE", "16"));
        assertFalse(s.embedded());
        assertEquals("cook", s.user());
        assertEquals("s3cret", s.password());
        assertEquals(Path.of("/var/lib/twofold"), s.dataDir());
        assertEquals(16, s.poolSize());
    }

    @Test
    void a_url_that_is_not_postgresql_names_the_variable() {
        ConfigurationException e = assertThrows(ConfigurationException.class, () -> DatabaseSettings.fromEnvironment(Map.of(
                "TWOFOLD_DB_URL", "jdbc:mysql://127.0.0.1/twofold")));
        assertTrue(e.getMessage().startsWith("TWOFOLD_DB_URL=jdbc:mysql://127.0.0.1/twofold is not a PostgreSQL JDBC URL"), e.getMessage());
        assertTrue(e.getMessage().contains("jdbc:postgresql://"), e.getMessage());
        assertEquals(TwofoldException.EXIT_USAGE, e.exitCode());
    }

    @Test
    void a_pool_size_outside_the_range_names_setting_value_and_range() {
        ConfigurationException e = assertThrows(ConfigurationException.class,
                () -> DatabaseSettings.fromEnvironment(Map.of("TWOFOLD_DB_POOL_SIZE", "1")));
        assertEquals("TWOFOLD_DB_POOL_SIZE=1 is outside the allowed range 2..64 (default 8)", e.getMessage());
        ConfigurationException big = assertThrows(ConfigurationException.class,
                () -> DatabaseSettings.fromEnvironment(Map.of("TWOFOLD_DB_POOL_SIZE", "65")));
        assertEquals("TWOFOLD_DB_POOL_SIZE=65 is outside the allowed range 2..64 (default 8)", big.getMessage());
    }

    @Test
    void a_pool_size_that_is_not_a_number_is_refused() {
        ConfigurationException e = assertThrows(ConfigurationException.class,
                () -> DatabaseSettings.fromEnvironment(Map.of("TWOFOLD_DB_POOL_SIZE", "eight")));
        assertEquals("TWOFOLD_DB_POOL_SIZE=eight is not a whole number; allowed 2..64 (default 8)", e.getMessage());
    }

    @Test
    void the_password_never_appears_in_the_description() {
        DatabaseSettings s = DatabaseSettings.fromEnvironment(Map.of(
                "TWOFOLD_DB_URL", "jdbc:postgresql://db:5432/twofold?password=hunter2",
                "TWOFOLD_DB_USER", "cook", "TWOFOLD_DB_PASSWORD", "s3cret"));
        assertFalse(s.toString().contains("s3cret"), s.toString());
        assertFalse(s.toString().contains("hunter2"), s.toString());
        assertTrue(s.toString().contains("password=****"), s.toString());
    }

    @Test
    void blank_variables_count_as_unset() {
        DatabaseSettings s = DatabaseSettings.fromEnvironment(Map.of("TWOFOLD_DB_URL", " ", "TWOFOLD_DATA_DIR", ""));
        assertTrue(s.embedded());
        assertNull(s.url());
        assertEquals(Path.of("./twofold-data"), s.dataDir());
    }
}
