package org.lungflag.service.fhirserver;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.client.api.IRestfulClientFactory;
import ca.uhn.fhir.rest.client.api.ServerValidationModeEnum;
import java.time.Clock;
import org.springframework.context.annotation.Bean;
import org.springframework.context.annotation.Configuration;

/** One FhirContext for the application (it is expensive and thread-safe) and a client for the FHIR server. */
@Configuration(proxyBeanMethods = false)
class FhirServerConfiguration {

    /**
     * Lungflag's own context (not the JVM-wide cached one): its parsers keep the versions of references, because
     * flag-detail, derivedFrom and Provenance must point at the exact Observation versions used (invariant 5).
     */
    @Bean
    FhirContext fhirContext() {
        return org.lungflag.service.offline.Pipelines.fhirContext();
    }

    @Bean
    IGenericClient fhirClient(
            FhirContext fhirContext, FhirServerProperties properties, FhirAuthProperties auth, Clock clock) {
        IRestfulClientFactory factory = fhirContext.getRestfulClientFactory();
        factory.setServerValidationMode(ServerValidationModeEnum.NEVER);
        factory.setConnectTimeout((int) properties.connectTimeout().toMillis());
        factory.setSocketTimeout((int) properties.readTimeout().toMillis());
        factory.setPoolMaxTotal(32);
        factory.setPoolMaxPerRoute(32);
        IGenericClient client = factory.newGenericClient(properties.base());
        switch (auth.type()) {
            case BEARER -> client.registerInterceptor(FhirAuthInterceptor.staticToken(auth.token()));
            case SMART_BACKEND ->
                client.registerInterceptor(FhirAuthInterceptor.smart(new SmartBackendTokens(auth, clock)));
            case NONE -> {}
        }
        return client;
    }
}
