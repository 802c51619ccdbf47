package org.lungflag.service.normalize;

import ca.uhn.fhir.context.FhirContext;
import java.util.Optional;
import org.lungflag.rules.units.MeasurementNormalizer;
import org.lungflag.service.conformance.ConformancePackage;
import org.lungflag.service.intake.IntakeProperties;
import org.springframework.context.annotation.Bean;
import org.springframework.context.annotation.Configuration;

@Configuration(proxyBeanMethods = false)
class NormalizeConfiguration {

    @Bean
    CodeMap codeMap(FhirContext fhir, ConformancePackage conformance, NormalizeProperties properties) {
        return SiteCodeMap.load(fhir, CodeMap.fromPackage(conformance), Optional.ofNullable(properties.conceptMap()));
    }

    @Bean
    ObservationMapper observationMapper(CodeMap codes, IntakeProperties intake) {
        return new ObservationMapper(codes, intake.futureSkew());
    }

    @Bean
    Normalizer normalizer(ObservationMapper mapper) {
        return new Normalizer(mapper, new MeasurementNormalizer());
    }
}
