package dev.twofold.service.testing;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.time.Duration;

/** A real HTTP client against a service on 127.0.0.1, sending an API key with every request when it has one. */
public final class ApiClient {

    private static final Duration TIMEOUT = Duration.ofSeconds(30);
    private static final ObjectMapper JSON = new ObjectMapper();

    private final HttpClient http;
    private final String base;
    private final String key;

    /** A client that sends no key. */
    public ApiClient(int port) {
        this(HttpClient.newBuilder().connectTimeout(TIMEOUT).build(), "http://127.0.0.1:" + port, null);
    }

    /** A client that sends {@code Authorization: Bearer key} with every request. */
    public ApiClient(int port, String key) {
        this(HttpClient.newBuilder().connectTimeout(TIMEOUT).build(), "http://127.0.0.1:" + port, key);
    }

    private ApiClient(HttpClient http, String base, String key) {
        this.http = http;
        this.base = base;
        this.key = key;
    }

    /** The same server, with {@code key} instead (null for none). */
    public ApiClient withKey(String key) {
        return new ApiClient(http, base, key);
    }

    public HttpResponse<String> get(String path) {
        return send(HttpRequest.newBuilder(uri(path)).GET());
    }

    public HttpResponse<String> postJson(String path, String body) {
        return post(path, "application/json", HttpRequest.BodyPublishers.ofString(body));
    }

    public HttpResponse<String> post(String path, String contentType, HttpRequest.BodyPublisher body) {
        HttpRequest.Builder request = HttpRequest.newBuilder(uri(path)).POST(body);
        if (contentType != null) {
            request.header("Content-Type", contentType);
        }
        return send(request);
    }

    public HttpResponse<String> send(String method, String path) {
        return send(HttpRequest.newBuilder(uri(path)).method(method, HttpRequest.BodyPublishers.noBody()));
    }

    public HttpResponse<String> send(HttpRequest.Builder request) {
        if (key != null) {
            request.header("Authorization", "Bearer " + key);
        }
        try {
            return http.send(request.timeout(TIMEOUT).build(), HttpResponse.BodyHandlers.ofString());
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            throw new IllegalStateException(e);
        }
    }

    public URI uri(String path) {
        return URI.create(base + path);
    }

    public static JsonNode json(HttpResponse<String> response) {
        try {
            return JSON.readTree(response.body());
        } catch (IOException e) {
            throw new UncheckedIOException("response is not JSON: " + response.body(), e);
        }
    }
}
