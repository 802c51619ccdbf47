package org.lungflag.service.deploy;

import java.io.IOException;
import java.io.PrintStream;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.time.Duration;

/**
 * A container health probe that needs nothing but the JDK: {@code java -cp lungflag-service.jar
 * org.lungflag.service.deploy.HttpProbe URL [TIMEOUT_SECONDS]} exits 0 when {@code GET URL} answers 2xx within the
 * timeout (default 5 s), 1 when it answers anything else or not at all, 2 on bad arguments. It prints one line and
 * never the response body. Used by the Lungflag image and by the FHIR server image, which is distroless.
 */
public final class HttpProbe {

    static final int HEALTHY = 0;
    static final int UNHEALTHY = 1;
    static final int USAGE = 2;

    private HttpProbe() {}

    public static void main(String[] args) {
        System.exit(check(System.out, args));
    }

    static int check(PrintStream out, String... args) {
        if (args.length < 1 || args.length > 2) {
            out.println("usage: HttpProbe URL [TIMEOUT_SECONDS]");
            return USAGE;
        }
        URI uri;
        Duration timeout;
        try {
            uri = URI.create(args[0]);
            if (!"http".equals(uri.getScheme()) && !"https".equals(uri.getScheme())) {
                throw new IllegalArgumentException("the URL must be http or https");
            }
            timeout = Duration.ofSeconds(args.length == 2 ? Long.parseLong(args[1]) : 5);
            if (timeout.isNegative() || timeout.isZero()) {
                throw new IllegalArgumentException("the timeout must be at least one second");
            }
        } catch (IllegalArgumentException e) {
            out.println("usage: HttpProbe URL [TIMEOUT_SECONDS]: " + e.getMessage());
            return USAGE;
        }
        HttpClient client = HttpClient.newBuilder().connectTimeout(timeout).build();
        HttpRequest request = HttpRequest.newBuilder(uri).timeout(timeout).GET().build();
        try {
            int status =
                    client.send(request, HttpResponse.BodyHandlers.discarding()).statusCode();
            out.println(uri + " answered " + status);
            return status >= 200 && status < 300 ? HEALTHY : UNHEALTHY;
        } catch (IOException e) {
            out.println(uri + " did not answer: " + e.getClass().getSimpleName());
            return UNHEALTHY;
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            out.println(uri + " probe interrupted");
            return UNHEALTHY;
        }
    }
}
