package org.lungflag.service.fhirserver;

import java.nio.file.Path;
import java.time.Duration;
import org.springframework.boot.context.properties.ConfigurationProperties;
import org.springframework.boot.context.properties.bind.DefaultValue;

/**
 * How Lungflag authenticates to the FHIR server ({@code lungflag.fhir.auth.*}).
 *
 * @param type {@code none}, {@code bearer} (a static token) or {@code smart-backend} (SMART Backend Services:
 *     OAuth 2.0 client credentials with a JWT client assertion signed RS384)
 * @param token the static bearer token ({@code bearer}); never logged
 * @param tokenUrl the authorization server's token endpoint ({@code smart-backend})
 * @param clientId the client id registered there; also the assertion's {@code iss} and {@code sub}
 * @param privateKey the client's RSA private key: a PEM file (PKCS#8, {@code BEGIN PRIVATE KEY}) or a JWK JSON file
 * @param keyId the {@code kid} of that key in the JWK Set registered with the server
 * @param scope the scopes asked for
 * @param refreshBefore a token is renewed this long before it expires
 */
@ConfigurationProperties("lungflag.fhir.auth")
public record FhirAuthProperties(
        @DefaultValue("none") Type type,
        String token,
        String tokenUrl,
        String clientId,
        Path privateKey,
        String keyId,

        @DefaultValue("system/Observation.rs system/Patient.rs system/Specimen.rs system/Procedure.rs"
                + " system/Encounter.rs system/Flag.cru system/Provenance.c system/Device.cru"
                + " system/Subscription.crud")
        String scope,

        @DefaultValue("60s") Duration refreshBefore) {

    /** The kinds of outbound authentication. */
    public enum Type {
        NONE,
        BEARER,
        SMART_BACKEND
    }

    @Override
    public String toString() {
        return "FhirAuthProperties[type=" + type + ", tokenUrl=" + tokenUrl + ", clientId=" + clientId + ", keyId="
                + keyId + ", secrets hidden]";
    }
}
