package dev.twofold.service;

import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.service.access.KeyRing;
import dev.twofold.service.http.AccessPolicy;
import dev.twofold.service.model.ModelLoader;
import dev.twofold.service.ops.Observability;
import dev.twofold.service.ops.OpsSettings;
import java.time.Clock;
import java.util.Map;
import java.util.concurrent.Callable;
import java.util.concurrent.CountDownLatch;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import picocli.CommandLine.Command;

/**
 * {@code twofold serve}: opens the database (an external one may still be down: the service then
 * starts not ready and keeps trying), reads the API keys, loads the active model (or waits for a
 * first one, live but not ready), serves HTTP and follows promotions and key changes until SIGTERM
 * or SIGINT, then drains requests in flight and closes everything in reverse order. Every
 * {@code /v1} request needs an API key unless {@code TWOFOLD_ACCESS=open} says otherwise (loopback
 * only, with a warning in the log).
 */
@Command(
        name = "serve",
        mixinStandardHelpOptions = true,
        description = "Serve recommendations and predictions over HTTP from the active model.",
        footerHeading = "%nEnvironment:%n",
        footer = {
            "  TWOFOLD_HTTP_HOST   interface to listen on (default " + ServiceSettings.DEFAULT_HOST + ")",
            "  TWOFOLD_HTTP_PORT   port, 0..65535, 0 picks a free one (default " + ServiceSettings.DEFAULT_PORT + ")",
            "  TWOFOLD_FRESH_USERS most users kept folded in between model loads (default "
                    + ServiceSettings.DEFAULT_FRESH_USERS + ")",
            "  TWOFOLD_ACCESS      keys (default): every /v1 request needs Authorization: Bearer <key>",
            "                      (twofold keys create); open: no keys, for local development on a",
            "                      loopback TWOFOLD_HTTP_HOST only",
            "  TWOFOLD_DB_URL, TWOFOLD_DB_USER, TWOFOLD_DB_PASSWORD, TWOFOLD_DATA_DIR   the database",
            "  JAVA_OPTS           include --add-modules jdk.incubator.vector for the SIMD scoring kernel",
            "The API is described by GET /openapi.yaml."
        })
public final class ServeCommand implements Callable<Integer> {

    private static final Logger LOG = LoggerFactory.getLogger(ServeCommand.class);

    private final Map<String, String> env;
    private final boolean stopOnSignal;
    private final CountDownLatch stopAsked = new CountDownLatch(1);
    private final CountDownLatch stopped = new CountDownLatch(1);
    private volatile int port = -1;

    /** The command as the launcher runs it: settings from the process environment, stopped by signals. */
    public ServeCommand() {
        this(System.getenv(), true);
    }

    /**
     * @param env          where the settings come from
     * @param stopOnSignal whether SIGTERM/SIGINT (a JVM shutdown hook) stop the service; otherwise
     *                     only {@link #stop()} does
     */
    ServeCommand(Map<String, String> env, boolean stopOnSignal) {
        this.env = env;
        this.stopOnSignal = stopOnSignal;
    }

    @Override
    public Integer call() {
        ServiceSettings settings = ServiceSettings.fromEnvironment(env);
        DatabaseSettings databaseSettings = DatabaseSettings.fromEnvironment(env);
        AccessPolicy access = settings.openAccess() ? AccessPolicy.OPEN : new KeyRing(settings.retryAfterSeconds());
        if (settings.openAccess()) {
            LOG.warn("ACCESS IS OPEN: {}={} admits every /v1 request without an API key, admin routes included"
                    + " (promoting models, erasing users). This is for local development only; unset {} to check keys",
                    ServiceSettings.ACCESS_VARIABLE, ServiceSettings.ACCESS_OPEN, ServiceSettings.ACCESS_VARIABLE);
        }
        try (Database database = Database.openDeferred(databaseSettings);
                Observability ops = new Observability(OpsSettings.defaults(), database, Clock.systemUTC());
                Service service = new Service(settings, access, database, new ModelLoader(database), ops)) {
            Thread hook = new Thread(this::stopAndWait, "twofold-serve-stop");
            if (stopOnSignal) {
                Runtime.getRuntime().addShutdownHook(hook);
            }
            port = service.start();
            LOG.info("Twofold serving on http://{}:{} ({}); database {}; {}", settings.host(), port,
                    service.model().map(m -> "model " + m.id()).orElse("waiting for a first model"),
                    database.description(), settings.openAccess() ? "ACCESS OPEN (no API keys)"
                            : "API keys required on /v1");
            awaitStop();
            LOG.info("stopping: finishing requests in flight (up to {} ms)", settings.stopTimeout().toMillis());
        } finally {
            // log before letting a waiting shutdown hook return: the JVM may halt right after it
            LOG.info("stopped");
            stopped.countDown();
        }
        return 0;
    }

    /** The bound port once serving, else -1. */
    int port() {
        return port;
    }

    /** Asks a running {@link #call()} to stop; it returns after closing everything. */
    void stop() {
        stopAsked.countDown();
    }

    private void awaitStop() {
        try {
            stopAsked.await();
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
        }
    }

    /** Shutdown hook: the JVM exits once this returns, so wait until call() has closed everything. */
    private void stopAndWait() {
        stop();
        try {
            stopped.await();
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
        }
    }
}
