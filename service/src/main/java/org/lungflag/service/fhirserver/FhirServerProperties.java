package org.lungflag.service.fhirserver;

import java.net.URI;
import java.time.Duration;
import org.springframework.boot.context.properties.ConfigurationProperties;
import org.springframework.boot.context.properties.bind.DefaultValue;

/**
 * Where the FHIR server is and how to talk to it ({@code lungflag.fhir.*}).
 *
 * @param baseUrl the server's base URL, e.g. {@code http://127.0.0.1:8090/fhir}
 * @param connectTimeout TCP connect timeout
 * @param readTimeout socket read timeout for one request
 */
@ConfigurationProperties("lungflag.fhir")
public record FhirServerProperties(
        URI baseUrl,
        @DefaultValue("5s") Duration connectTimeout,
        @DefaultValue("30s") Duration readTimeout) {

    public FhirServerProperties {
        if (baseUrl == null) {
            throw new IllegalArgumentException(
                    "lungflag.fhir.base-url is required (environment: LUNGFLAG_FHIR_BASE_URL), e.g. http://127.0.0.1:8090/fhir");
        }
    }

    /** The base URL without a trailing slash. */
    public String base() {
        String s = baseUrl.toString();
        return s.endsWith("/") ? s.substring(0, s.length() - 1) : s;
    }
}
