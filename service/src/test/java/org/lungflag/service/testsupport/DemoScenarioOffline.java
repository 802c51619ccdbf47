package org.lungflag.service.testsupport;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.parser.IParser;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Patient;
import org.hl7.fhir.r4.model.Specimen;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.engine.CalculatorIndexProvider;
import org.lungflag.rules.engine.EngineSettings;
import org.lungflag.rules.engine.RuleEngine;
import org.lungflag.rules.index.SiteParameters;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.units.MeasurementNormalizer;
import org.lungflag.sandbox.scenario.DemoScenario;
import org.lungflag.service.conformance.ConformancePackage;
import org.lungflag.service.normalize.CodeMap;
import org.lungflag.service.normalize.NormalizedResource;
import org.lungflag.service.normalize.Normalizer;
import org.lungflag.service.normalize.ObservationMapper;
import org.lungflag.service.normalize.SpecimenLookup;
import org.lungflag.service.offline.OfflineEvaluation;
import org.lungflag.service.offline.PatientRun;
import org.lungflag.service.patient.PatientFactsMapper;

/**
 * The demo scenario (invented patients) read and normalized by the real pipeline without a server: the same
 * normalizer, engine and default rule catalog as the live service and replay, evaluated to the scenario's end.
 *
 * @param byPatient each patient's normalized Observations, in file order
 * @param refused the Observations the normalizer refused (id: reason)
 */
public record DemoScenarioOffline(
        DemoScenario scenario,
        OfflineEvaluation offline,
        Instant end,
        Map<String, PatientFacts> patients,
        Map<String, List<NormalizedResource>> byPatient,
        List<String> refused) {

    public static DemoScenarioOffline load() {
        DemoScenario scenario = DemoScenario.load();
        FhirContext ctx = FhirContext.forR4Cached();
        IParser parser = ctx.newJsonParser();
        Normalizer normalizer = new Normalizer(
                new ObservationMapper(CodeMap.fromPackage(ConformancePackage.load(ctx)), Duration.ofMinutes(5)),
                new MeasurementNormalizer());
        RuleCatalog catalog = RuleCatalog.loadDefault();
        RuleEngine engine = new RuleEngine(
                catalog,
                ParameterOverrides.from(catalog, Map.of()),
                new CalculatorIndexProvider(SiteParameters.defaults()),
                EngineSettings.defaults());
        OfflineEvaluation offline = new OfflineEvaluation(engine, catalog, Duration.ofHours(48));

        Map<String, PatientFacts> patients = new LinkedHashMap<>();
        for (String line : scenario.lines("Patient.ndjson")) {
            Patient p = parser.parseResource(Patient.class, line);
            patients.put(p.getIdElement().getIdPart(), PatientFactsMapper.from(p));
        }
        Map<String, SpecimenLookup.SpecimenFacts> specimens = new LinkedHashMap<>();
        for (String line : scenario.lines("Specimen.ndjson")) {
            Specimen s = parser.parseResource(Specimen.class, line);
            specimens.put("Specimen/" + s.getIdElement().getIdPart(), ObservationMapper.facts(s));
        }
        Instant end = scenario.nominalStart().plus(scenario.length());
        Map<String, List<NormalizedResource>> byPatient = new LinkedHashMap<>();
        List<String> refused = new ArrayList<>();
        for (String line : scenario.lines("Observation.ndjson")) {
            Observation o = parser.parseResource(Observation.class, line);
            NormalizedResource r;
            try {
                r = normalizer.normalize(o, end, ref -> Optional.ofNullable(specimens.get(ref)));
            } catch (SpecimenLookup.SpecimenUnavailable e) {
                throw new IllegalStateException("a lookup in a map cannot be unavailable", e);
            }
            r.refusals().forEach(x -> refused.add(o.getIdElement().getIdPart() + ": " + x));
            byPatient.computeIfAbsent(r.patientId(), k -> new ArrayList<>()).add(r);
        }
        return new DemoScenarioOffline(scenario, offline, end, patients, byPatient, refused);
    }

    /** One patient's run over the whole scenario. */
    public PatientRun run(String patientId) {
        return offline.run(patients.get(patientId), byPatient.get(patientId), end);
    }
}
