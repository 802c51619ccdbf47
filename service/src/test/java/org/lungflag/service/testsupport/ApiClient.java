package org.lungflag.service.testsupport;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.io.IOException;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;

/** A small HTTP client for the audit API in tests: Basic credentials (or none), JSON parsed with Jackson. */
public final class ApiClient {

    private static final ObjectMapper JSON = new ObjectMapper();

    private final HttpClient http = HttpClient.newHttpClient();
    private final String base;
    private final String authorization;

    public ApiClient(int port, String authorization) {
        this.base = "http://127.0.0.1:" + port;
        this.authorization = authorization;
    }

    public static ApiClient auditor(int port) {
        return new ApiClient(port, TestAccounts.auditor());
    }

    public static ApiClient admin(int port) {
        return new ApiClient(port, TestAccounts.admin());
    }

    public static ApiClient anonymous(int port) {
        return new ApiClient(port, null);
    }

    private HttpRequest.Builder request(String path) {
        HttpRequest.Builder b = HttpRequest.newBuilder(URI.create(base + path));
        if (authorization != null) {
            b.header("Authorization", authorization);
        }
        return b;
    }

    public HttpResponse<String> get(String path) {
        return send(request(path).GET().build());
    }

    public HttpResponse<String> put(String path, String contentType, String body) {
        return send(request(path)
                .header("Content-Type", contentType)
                .PUT(HttpRequest.BodyPublishers.ofString(body))
                .build());
    }

    public HttpResponse<String> post(String path, String contentType, String body) {
        return send(request(path)
                .header("Content-Type", contentType)
                .POST(HttpRequest.BodyPublishers.ofString(body))
                .build());
    }

    public HttpResponse<String> send(HttpRequest request) {
        try {
            return http.send(request, HttpResponse.BodyHandlers.ofString());
        } catch (IOException e) {
            throw new IllegalStateException(e);
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            throw new IllegalStateException(e);
        }
    }

    /** GET, expect 200, parse JSON. */
    public JsonNode json(String path) {
        HttpResponse<String> r = get(path);
        if (r.statusCode() != 200) {
            throw new AssertionError("GET " + path + " answered " + r.statusCode() + ": " + r.body());
        }
        return parse(r.body());
    }

    public static JsonNode parse(String body) {
        try {
            return JSON.readTree(body);
        } catch (IOException e) {
            throw new AssertionError("not JSON: " + body, e);
        }
    }
}
