package dev.twofold.service.ops;

import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonGenerator;
import io.javalin.config.RoutesConfig;
import io.javalin.http.Context;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.time.Duration;
import java.time.Instant;
import java.util.List;
import java.util.Map;
import java.util.Properties;

/**
 * The built-in dashboard: a page, its script and style, the charting library (uPlot, from its
 * webjar on the classpath) and the JSON the page draws from. Everything is served from the jar;
 * the page loads nothing from elsewhere (its Content-Security-Policy forbids it).
 *
 * <p>Routes: {@code GET /dashboard} (the page), {@code GET /dashboard/data} (the figures, see
 * {@code openapi.yaml}), {@code GET /dashboard/assets/{name}} (a fixed set of files).
 */
final class Dashboard {

    static final String PAGE = "/dashboard";
    static final String DATA = "/dashboard/data";
    static final String ASSETS = "/dashboard/assets/{name}";
    static final String JSON = "application/json";
    /** Only our own files; inline scripts and styles, frames and outside hosts are refused. */
    static final String CONTENT_SECURITY_POLICY = "default-src 'none'; script-src 'self'; style-src 'self';"
            + " img-src 'self'; connect-src 'self'; base-uri 'none'; form-action 'none'; frame-ancestors 'none'";
    private static final String OWN = "dashboard/";
    private static final String UPLOT_POM = "META-INF/maven/org.webjars.npm/uplot/pom.properties";
    private static final String UPLOT_DIST = "META-INF/resources/webjars/uplot/%s/dist/%s";
    private static final JsonFactory JSON_FACTORY = new JsonFactory();

    private record Asset(byte[] bytes, String contentType) {
    }

    private final OpsSettings settings;
    private final ServiceMetrics metrics;
    private final TrafficHistory traffic;
    private final RetrainHistory history;
    private final byte[] page;
    private final Map<String, Asset> assets;

    /** @param history the retrain history, or null without a database */
    Dashboard(OpsSettings settings, ServiceMetrics metrics, TrafficHistory traffic, RetrainHistory history) {
        this.settings = settings;
        this.metrics = metrics;
        this.traffic = traffic;
        this.history = history;
        this.page = resource(OWN + "index.html");
        String uplot = uplotVersion();
        this.assets = Map.of(
                "dashboard.js", new Asset(resource(OWN + "dashboard.js"), "text/javascript; charset=utf-8"),
                "dashboard.css", new Asset(resource(OWN + "dashboard.css"), "text/css; charset=utf-8"),
                "icon.svg", new Asset(resource(OWN + "icon.svg"), "image/svg+xml"),
                "uplot.js", new Asset(classpath(String.format(UPLOT_DIST, uplot, "uPlot.iife.min.js")),
                        "text/javascript; charset=utf-8"),
                "uplot.css", new Asset(classpath(String.format(UPLOT_DIST, uplot, "uPlot.min.css")),
                        "text/css; charset=utf-8"));
    }

    void register(RoutesConfig routes) {
        routes.get(PAGE, ctx -> {
            secure(ctx);
            ctx.header("Cache-Control", "no-cache").contentType("text/html; charset=utf-8").result(page);
        });
        routes.get(DATA, ctx -> {
            secure(ctx);
            ctx.header("Cache-Control", "no-store").contentType(JSON).result(data());
        });
        routes.get(ASSETS, ctx -> {
            Asset asset = assets.get(ctx.pathParam("name"));
            if (asset == null) {
                ctx.status(404);
                return;
            }
            secure(ctx);
            ctx.header("Cache-Control", "max-age=300").contentType(asset.contentType()).result(asset.bytes());
        });
    }

    private static void secure(Context ctx) {
        ctx.header("Content-Security-Policy", CONTENT_SECURITY_POLICY);
        ctx.header("X-Content-Type-Options", "nosniff");
        ctx.header("Referrer-Policy", "no-referrer");
    }

    /** The figures the page draws, as described for {@code GET /dashboard/data} in {@code openapi.yaml}. */
    byte[] data() {
        Instant now = metrics.clock().instant();
        ByteArrayOutputStream out = new ByteArrayOutputStream(16 * 1024);
        try (JsonGenerator json = JSON_FACTORY.createGenerator(out)) {
            json.writeStartObject();
            json.writeStringField("generatedAt", now.toString());
            json.writeNumberField("refreshSeconds", settings.trafficInterval().toMillis() / 1000.0);
            writeTargets(json);
            writeModel(json, metrics.liveModel(), now);
            writeRetrains(json);
            writeTraffic(json);
            json.writeEndObject();
        } catch (IOException e) {
            throw new UncheckedIOException("writing the dashboard data", e);
        }
        return out.toByteArray();
    }

    private static void writeTargets(JsonGenerator json) throws IOException {
        json.writeObjectFieldStart("targets");
        json.writeNumberField("p99Ms", OpsSettings.LATENCY_TARGET_MS);
        json.writeNumberField("serverErrorRate", OpsSettings.SERVER_ERROR_RATE_LIMIT);
        json.writeNumberField("modelAgeLimitSeconds", OpsSettings.MODEL_AGE_LIMIT.toSeconds());
        json.writeNumberField("retrainMissingAfterSeconds", OpsSettings.RETRAIN_MISSING_AFTER.toSeconds());
        json.writeEndObject();
    }

    private static void writeModel(JsonGenerator json, ServiceMetrics.LiveModel live, Instant now) throws IOException {
        if (live == null) {
            json.writeNullField("model");
            return;
        }
        HeldOutFigures f = live.figures();
        json.writeObjectFieldStart("model");
        json.writeNumberField("id", live.header().id());
        json.writeNumberField("rank", live.header().rank());
        json.writeStringField("coupling", live.header().coupling());
        json.writeNumberField("items", live.header().numItems());
        json.writeStringField("trainedAt", live.trainedAt().toString());
        json.writeNumberField("ageSeconds", Duration.between(live.trainedAt(), now).toMillis() / 1000.0);
        json.writeStringField("loadedAt", live.installedAt().toString());
        json.writeNumberField("k", f.k());
        number(json, "rmse", f.rmse());
        number(json, "precision", f.precision());
        number(json, "coverage", f.coverage());
        number(json, "coldRmse", f.coldRmse());
        number(json, "coldPrecision", f.coldPrecision());
        json.writeEndObject();
    }

    private void writeRetrains(JsonGenerator json) throws IOException {
        json.writeObjectFieldStart("retrains");
        RetrainHistory.Reading reading = history == null ? null : history.reading();
        json.writeBooleanField("available", history != null);
        if (reading == null) {
            json.writeNullField("readAt");
        } else {
            json.writeStringField("readAt", reading.readAt().toString());
        }
        String problem = history == null ? "this service runs without a database, so it has no retrain history"
                : history.problem();
        if (problem == null) {
            json.writeNullField("problem");
        } else {
            json.writeStringField("problem", problem);
        }
        instant(json, "lastSuccessAt", reading == null ? null
                : reading.lastSuccess().map(RetrainHistory.Version::finishedAt).orElse(null));
        instant(json, "lastFailureAt", reading == null ? null : reading.lastFailure()
                .map(v -> v.finishedAt() != null ? v.finishedAt() : v.createdAt()).orElse(null));
        json.writeArrayFieldStart("versions");
        if (reading != null) {
            List<RetrainHistory.Version> all = reading.versions();
            for (RetrainHistory.Version v : all.subList(Math.max(0, all.size() - settings.historyVersions()),
                    all.size())) {
                writeVersion(json, v);
            }
        }
        json.writeEndArray();
        json.writeEndObject();
    }

    private static void writeVersion(JsonGenerator json, RetrainHistory.Version v) throws IOException {
        HeldOutFigures f = v.figures();
        json.writeStartObject();
        json.writeNumberField("id", v.id());
        json.writeStringField("status", v.status());
        json.writeStringField("outcome", v.outcome());
        instant(json, "createdAt", v.createdAt());
        instant(json, "finishedAt", v.finishedAt());
        number(json, "durationSeconds", v.durationSeconds());
        json.writeNumberField("k", f.k());
        number(json, "rmse", f.rmse());
        number(json, "precision", f.precision());
        number(json, "coverage", f.coverage());
        json.writeObjectFieldStart("baselines");
        number(json, "globalMeanRmse", f.globalMeanRmse());
        number(json, "biasesOnlyRmse", f.biasesOnlyRmse());
        number(json, "withoutTrustRmse", f.withoutTrustRmse());
        number(json, "mostPopularPrecision", f.mostPopularPrecision());
        number(json, "withoutTrustPrecision", f.withoutTrustPrecision());
        json.writeEndObject();
        if (v.reason() == null) {
            json.writeNullField("reason");
        } else {
            json.writeStringField("reason", v.reason());
        }
        json.writeEndObject();
    }

    private void writeTraffic(JsonGenerator json) throws IOException {
        json.writeObjectFieldStart("traffic");
        json.writeNumberField("intervalSeconds", settings.trafficInterval().toMillis() / 1000.0);
        json.writeArrayFieldStart("samples");
        for (TrafficHistory.Sample s : traffic.samples()) {
            json.writeStartObject();
            json.writeNumberField("at", s.at().toEpochMilli() / 1000.0);
            number(json, "requestsPerSecond", s.requestsPerSecond());
            number(json, "clientErrorsPerSecond", s.clientErrorsPerSecond());
            number(json, "serverErrorsPerSecond", s.serverErrorsPerSecond());
            number(json, "p50Ms", s.latencyMs()[0]);
            number(json, "p95Ms", s.latencyMs()[1]);
            number(json, "p99Ms", s.latencyMs()[2]);
            json.writeObjectFieldStart("strategies");
            for (Map.Entry<String, Double> e : s.strategiesPerSecond().entrySet()) {
                number(json, e.getKey(), e.getValue());
            }
            json.writeEndObject();
            number(json, "keptListHitsPerSecond", s.keptListHitsPerSecond());
            number(json, "keptListMissesPerSecond", s.keptListMissesPerSecond());
            json.writeEndObject();
        }
        json.writeEndArray();
        json.writeEndObject();
    }

    private static void number(JsonGenerator json, String field, double value) throws IOException {
        if (Double.isFinite(value)) {
            json.writeNumberField(field, value);
        } else {
            json.writeNullField(field);
        }
    }

    private static void instant(JsonGenerator json, String field, Instant value) throws IOException {
        if (value == null) {
            json.writeNullField(field);
        } else {
            json.writeStringField(field, value.toString());
        }
    }

    private static byte[] resource(String name) {
        try (InputStream in = Dashboard.class.getResourceAsStream(name)) {
            if (in == null) {
                throw new IllegalStateException("the dashboard file " + name + " is missing from the service jar next to "
                        + Dashboard.class.getName());
            }
            return in.readAllBytes();
        } catch (IOException e) {
            throw new UncheckedIOException("reading the dashboard file " + name, e);
        }
    }

    private static byte[] classpath(String name) {
        try (InputStream in = Dashboard.class.getClassLoader().getResourceAsStream(name)) {
            if (in == null) {
                throw new IllegalStateException(name + " is missing from the classpath; the service jar must carry"
                        + " the uPlot webjar (org.webjars.npm:uplot)");
            }
            return in.readAllBytes();
        } catch (IOException e) {
            throw new UncheckedIOException("reading " + name, e);
        }
    }

    private static String uplotVersion() {
        Properties pom = new Properties();
        try (InputStream in = Dashboard.class.getClassLoader().getResourceAsStream(UPLOT_POM)) {
            if (in == null) {
                throw new IllegalStateException(UPLOT_POM + " is missing from the classpath; the service jar must carry"
                        + " the uPlot webjar (org.webjars.npm:uplot)");
            }
            pom.load(in);
        } catch (IOException e) {
            throw new UncheckedIOException("reading " + UPLOT_POM, e);
        }
        return pom.getProperty("version");
    }
}
