package org.lungflag.service.fhirserver;

import ca.uhn.fhir.rest.client.api.IClientInterceptor;
import ca.uhn.fhir.rest.client.api.IHttpRequest;
import ca.uhn.fhir.rest.client.api.IHttpResponse;
import java.util.function.Supplier;

/**
 * Adds {@code Authorization: Bearer ...} to every request of the FHIR client: a static token or a SMART Backend
 * Services token. A 401 from the server drops the cached SMART token so the next request gets a fresh one.
 */
public class FhirAuthInterceptor implements IClientInterceptor {

    private final Supplier<String> token;
    private final Runnable onUnauthorized;

    public FhirAuthInterceptor(Supplier<String> token, Runnable onUnauthorized) {
        this.token = token;
        this.onUnauthorized = onUnauthorized;
    }

    static FhirAuthInterceptor staticToken(String token) {
        if (token == null || token.isBlank()) {
            throw new IllegalArgumentException(
                    "lungflag.fhir.auth.type=bearer needs lungflag.fhir.auth.token (LUNGFLAG_FHIR_AUTH_TOKEN)");
        }
        return new FhirAuthInterceptor(() -> token, () -> {});
    }

    public static FhirAuthInterceptor smart(SmartBackendTokens tokens) {
        return new FhirAuthInterceptor(tokens::current, tokens::invalidate);
    }

    @Override
    public void interceptRequest(IHttpRequest request) {
        request.addHeader("Authorization", "Bearer " + token.get());
    }

    @Override
    public void interceptResponse(IHttpResponse response) {
        if (response.getStatus() == 401) {
            onUnauthorized.run();
        }
    }

    @Override
    public String toString() {
        return "FhirAuthInterceptor[token hidden]";
    }
}
