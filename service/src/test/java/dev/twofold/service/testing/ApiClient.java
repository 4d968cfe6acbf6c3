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

/** A real HTTP client against a service on 127.0.0.1. */
public final class ApiClient {

    private static final Duration TIMEOUT = Duration.ofSeconds(30);
    private static final ObjectMapper JSON = new ObjectMapper();

    private final HttpClient http = HttpClient.newBuilder().connectTimeout(TIMEOUT).build();
    private final String base;

    public ApiClient(int port) {
        this.base = "http://127.0.0.1:" + port;
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
