package org.lungflag.service.conformance;

import ca.uhn.fhir.context.FhirContext;
import org.lungflag.service.writeback.OutgoingValidator;
import org.springframework.context.annotation.Bean;
import org.springframework.context.annotation.Configuration;
import org.springframework.context.annotation.Lazy;

@Configuration(proxyBeanMethods = false)
class ConformanceConfiguration {

    @Bean
    ConformancePackage conformancePackage(FhirContext fhir) {
        return ConformancePackage.load(fhir);
    }

    /** Built on first use (the first validation loads the FHIR core definitions, several seconds). */
    @Bean
    @Lazy
    OutgoingValidator outgoingValidator(FhirContext fhir) {
        return new ConformanceValidator(fhir);
    }
}
