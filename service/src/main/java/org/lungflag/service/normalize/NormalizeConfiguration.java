package org.lungflag.service.normalize;

import ca.uhn.fhir.context.FhirContext;
import org.lungflag.service.conformance.ConformancePackage;
import org.lungflag.service.intake.IntakeProperties;
import org.lungflag.service.offline.Pipelines;
import org.springframework.context.annotation.Bean;
import org.springframework.context.annotation.Configuration;

@Configuration(proxyBeanMethods = false)
class NormalizeConfiguration {

    @Bean
    CodeMap codeMap(FhirContext fhir, ConformancePackage conformance, NormalizeProperties properties) {
        return Pipelines.codeMap(fhir, conformance, properties.conceptMap());
    }

    @Bean
    Normalizer normalizer(CodeMap codes, IntakeProperties intake) {
        return Pipelines.normalizer(codes, intake.futureSkew());
    }

    @Bean
    ObservationMapper observationMapper(Normalizer normalizer) {
        return normalizer.mapper();
    }
}
