package org.lungflag.service.offline;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.context.PerformanceOptionsEnum;
import java.nio.file.Path;
import java.time.Duration;
import java.util.Optional;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.engine.CalculatorIndexProvider;
import org.lungflag.rules.engine.EngineSettings;
import org.lungflag.rules.engine.RuleEngine;
import org.lungflag.rules.index.SiteParameters;
import org.lungflag.rules.pairing.PairingSettings;
import org.lungflag.rules.units.MeasurementNormalizer;
import org.lungflag.service.conformance.ConformancePackage;
import org.lungflag.service.evaluation.EvaluationProperties;
import org.lungflag.service.normalize.CodeMap;
import org.lungflag.service.normalize.Normalizer;
import org.lungflag.service.normalize.ObservationMapper;
import org.lungflag.service.normalize.SiteCodeMap;

/**
 * How the pipeline's parts are put together from the settings, in one place: the Spring configuration of the live
 * service and the replay command (which starts no Spring context) both call these, so both build the same FHIR
 * context, normalizer and engine (design invariant 2).
 */
public final class Pipelines {

    private Pipelines() {}

    /**
     * Lungflag's own FHIR context: its parsers keep the versions of references, because flag-detail, derivedFrom and
     * Provenance must point at the exact Observation versions used (invariant 5).
     */
    public static FhirContext fhirContext() {
        FhirContext context = FhirContext.forR4();
        context.setPerformanceOptions(PerformanceOptionsEnum.DEFERRED_MODEL_SCANNING);
        context.getParserOptions().setStripVersionsFromReferences(false);
        return context;
    }

    /** The input code map: the conformance package's input ValueSets, plus the site ConceptMap if one is set. */
    public static CodeMap codeMap(FhirContext fhir, ConformancePackage conformance, Path siteConceptMap) {
        return SiteCodeMap.load(fhir, CodeMap.fromPackage(conformance), Optional.ofNullable(siteConceptMap));
    }

    /** The one normalization path: the FHIR mapping, then the rules core's measurement normalizer. */
    public static Normalizer normalizer(CodeMap codes, Duration futureSkew) {
        return new Normalizer(new ObservationMapper(codes, futureSkew), new MeasurementNormalizer());
    }

    /** The catalog the settings name: the built-in one, or a folder of rules. */
    public static RuleCatalog catalog(Path folder) {
        return folder == null ? RuleCatalog.loadDefault() : RuleCatalog.load(folder);
    }

    public static SiteParameters siteParameters(EvaluationProperties properties) {
        return SiteParameters.defaults().withBarometricPressure(properties.barometricPressure());
    }

    /** The rule engine with the settings' pairing look-backs, display zone and site parameters. */
    public static RuleEngine engine(
            RuleCatalog catalog, ParameterOverrides overrides, SiteParameters site, EvaluationProperties properties) {
        EngineSettings settings = new EngineSettings(
                new PairingSettings(properties.settingLookBack(), properties.measurementLookBack()),
                properties.displayZone(),
                EngineSettings.defaults().checkpointEvery());
        return new RuleEngine(catalog, overrides, new CalculatorIndexProvider(site), settings);
    }
}
