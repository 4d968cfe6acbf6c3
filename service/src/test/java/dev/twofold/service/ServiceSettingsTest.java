package dev.twofold.service;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.ConfigurationException;
import dev.twofold.db.TwofoldException;
import java.time.Duration;
import java.util.Map;
import org.junit.jupiter.api.Test;

class ServiceSettingsTest {

    @Test
    void with_nothing_set_the_service_listens_on_every_interface_at_8080() {
        ServiceSettings settings = ServiceSettings.fromEnvironment(Map.of());
        assertEquals("0.0.0.0", settings.host());
        assertEquals(8080, settings.port());
        assertEquals(Duration.ofMillis(ServiceSettings.DEFAULT_STOP_TIMEOUT_MS), settings.stopTimeout());
        assertEquals(2, settings.retryAfterSeconds(), "polling every 2 s keeps a missed notification within 5 s");
        assertEquals(ServiceSettings.DEFAULT_FRESH_USERS, settings.freshUsers());
        assertFalse(settings.openAccess(), "API keys are checked unless asked otherwise");
    }

    @Test
    void open_access_must_be_asked_for_by_name_and_only_on_a_loopback_address() {
        for (String host : new String[] {"127.0.0.1", "127.1.2.3", "::1", "[::1]", "localhost"}) {
            assertTrue(ServiceSettings.fromEnvironment(Map.of("TWOFOLD_ACCESS", "open", "TWOFOLD_HTTP_HOST", host))
                    .openAccess(), host);
        }
        assertFalse(ServiceSettings.fromEnvironment(Map.of("TWOFOLD_ACCESS", " keys ")).openAccess());
        for (String host : new String[] {"0.0.0.0", "10.0.0.7", "twofold.example", "127.0.0.1.example", "::"}) {
            ConfigurationException e = assertThrows(ConfigurationException.class, () -> ServiceSettings.fromEnvironment(
                    Map.of("TWOFOLD_ACCESS", "open", "TWOFOLD_HTTP_HOST", host)));
            assertTrue(e.getMessage().contains("TWOFOLD_ACCESS=open") && e.getMessage().contains("'" + host + "'"),
                    e.getMessage());
        }
        ConfigurationException e = assertThrows(ConfigurationException.class,
                () -> ServiceSettings.fromEnvironment(Map.of("TWOFOLD_ACCESS", "none", "TWOFOLD_HTTP_HOST", "127.0.0.1")));
        assertTrue(e.getMessage().contains("TWOFOLD_ACCESS='none'") && e.getMessage().contains("keys")
                && e.getMessage().contains("open"), e.getMessage());
    }

    @Test
    void the_fresh_user_capacity_comes_from_the_environment_and_is_checked() {
        assertEquals(0, ServiceSettings.fromEnvironment(Map.of("TWOFOLD_FRESH_USERS", "0")).freshUsers());
        assertEquals(5000, ServiceSettings.fromEnvironment(Map.of("TWOFOLD_FRESH_USERS", " 5000 ")).freshUsers());
        for (String value : new String[] {"-1", "10000001", "many"}) {
            ConfigurationException e = assertThrows(ConfigurationException.class,
                    () -> ServiceSettings.fromEnvironment(Map.of("TWOFOLD_FRESH_USERS", value)));
            assertTrue(e.getMessage().contains("TWOFOLD_FRESH_USERS") && e.getMessage().contains(value)
                    && e.getMessage().contains("0..10000000"), e.getMessage());
        }
    }

    @Test
    void the_http_thread_count_defaults_to_eight_per_core_and_is_checked() {
        int cores = Runtime.getRuntime().availableProcessors();
        assertEquals(Math.max(16, 8 * cores), ServiceSettings.fromEnvironment(Map.of()).httpThreads());
        assertEquals(40, ServiceSettings.fromEnvironment(Map.of("TWOFOLD_HTTP_THREADS", " 40 ")).httpThreads());
        for (String value : new String[] {"7", "1001", "lots", "0"}) {
            ConfigurationException e = assertThrows(ConfigurationException.class,
                    () -> ServiceSettings.fromEnvironment(Map.of("TWOFOLD_HTTP_THREADS", value)));
            assertTrue(e.getMessage().contains("TWOFOLD_HTTP_THREADS") && e.getMessage().contains(value)
                    && e.getMessage().contains("8..1000"), e.getMessage());
        }
    }

    @Test
    void the_ranked_list_cache_takes_32_mib_unless_set_and_is_checked() {
        assertEquals(32, ServiceSettings.fromEnvironment(Map.of()).listCacheMb());
        assertEquals(32L << 20, ServiceSettings.fromEnvironment(Map.of()).listCacheBytes());
        assertEquals(0, ServiceSettings.fromEnvironment(Map.of("TWOFOLD_LIST_CACHE_MB", " 0 ")).listCacheMb());
        for (String value : new String[] {"-1", "65537", "half"}) {
            ConfigurationException e = assertThrows(ConfigurationException.class,
                    () -> ServiceSettings.fromEnvironment(Map.of("TWOFOLD_LIST_CACHE_MB", value)));
            assertTrue(e.getMessage().contains("TWOFOLD_LIST_CACHE_MB") && e.getMessage().contains(value)
                    && e.getMessage().contains("0..65536"), e.getMessage());
        }
    }

    @Test
    void the_warm_up_lasts_three_seconds_unless_set_and_is_checked() {
        assertEquals(Duration.ofSeconds(3), ServiceSettings.fromEnvironment(Map.of()).warmUp());
        assertEquals(Duration.ZERO, ServiceSettings.fromEnvironment(Map.of("TWOFOLD_WARM_UP_SECONDS", "0")).warmUp());
        for (String value : new String[] {"-1", "121", "soon"}) {
            ConfigurationException e = assertThrows(ConfigurationException.class,
                    () -> ServiceSettings.fromEnvironment(Map.of("TWOFOLD_WARM_UP_SECONDS", value)));
            assertTrue(e.getMessage().contains("TWOFOLD_WARM_UP_SECONDS") && e.getMessage().contains(value)
                    && e.getMessage().contains("0..120"), e.getMessage());
        }
    }

    @Test
    void host_and_port_come_from_the_environment() {
        ServiceSettings settings = ServiceSettings.fromEnvironment(
                Map.of("TWOFOLD_HTTP_HOST", " 127.0.0.1 ", "TWOFOLD_HTTP_PORT", "0"));
        assertEquals("127.0.0.1", settings.host());
        assertEquals(0, settings.port());
        assertEquals(65535, ServiceSettings.fromEnvironment(Map.of("TWOFOLD_HTTP_PORT", "65535")).port());
        assertEquals(8080, ServiceSettings.fromEnvironment(Map.of("TWOFOLD_HTTP_PORT", " ")).port());
    }

    @Test
    void a_bad_port_is_refused_naming_the_variable_the_value_and_the_range() {
        for (String port : new String[] {"65536", "-1", "eighty", "80.5"}) {
            ConfigurationException e = assertThrows(ConfigurationException.class,
                    () -> ServiceSettings.fromEnvironment(Map.of("TWOFOLD_HTTP_PORT", port)));
            assertTrue(e.getMessage().contains("TWOFOLD_HTTP_PORT") && e.getMessage().contains(port)
                    && e.getMessage().contains("0..65535"), e.getMessage());
            assertEquals(TwofoldException.EXIT_USAGE, e.exitCode());
        }
    }

    @Test
    void a_host_with_spaces_inside_is_refused() {
        ConfigurationException e = assertThrows(ConfigurationException.class,
                () -> ServiceSettings.fromEnvironment(Map.of("TWOFOLD_HTTP_HOST", "local host")));
        assertTrue(e.getMessage().contains("TWOFOLD_HTTP_HOST") && e.getMessage().contains("local host"),
                e.getMessage());
    }

    @Test
    void retry_after_rounds_the_poll_interval_up_to_whole_seconds() {
        assertEquals(1, new ServiceSettings("h", 1, Duration.ZERO, Duration.ofMillis(100)).retryAfterSeconds());
        assertEquals(3, new ServiceSettings("h", 1, Duration.ZERO, Duration.ofMillis(2001)).retryAfterSeconds());
    }
}
