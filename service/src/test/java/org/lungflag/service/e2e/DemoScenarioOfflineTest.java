package org.lungflag.service.e2e;

import static org.assertj.core.api.Assertions.assertThat;

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
import org.junit.jupiter.api.Test;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.engine.CalculatorIndexProvider;
import org.lungflag.rules.engine.EngineSettings;
import org.lungflag.rules.engine.EpisodeStatus;
import org.lungflag.rules.engine.RuleEngine;
import org.lungflag.rules.engine.RuleEvaluation;
import org.lungflag.rules.index.SiteParameters;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.UnitRepair;
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
 * The demo scenario through the real pipeline without a server (the same normalizer, engine and rule catalog as the
 * live service and replay): the advisories, not-evaluable reasons and unit repairs are those its design expects.
 * Fast, so a change to the scenario or the catalog that breaks the demo shows here first.
 */
class DemoScenarioOfflineTest {

    @Test
    void theEngineRaisesWhatTheScenarioDesignExpects() throws Exception {
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
            NormalizedResource r = normalizer.normalize(o, end, ref -> Optional.ofNullable(specimens.get(ref)));
            r.refusals().forEach(x -> refused.add(o.getIdElement().getIdPart() + ": " + x));
            byPatient.computeIfAbsent(r.patientId(), k -> new ArrayList<>()).add(r);
        }
        // every scenario Observation maps: the data-quality cases are in the values, not in broken resources
        assertThat(refused).isEmpty();

        List<DemoScenarioChecks.Evaluation> evaluations = new ArrayList<>();
        List<DemoScenarioChecks.Episode> episodes = new ArrayList<>();
        List<DemoScenarioChecks.Repair> repairs = new ArrayList<>();
        for (Map.Entry<String, List<NormalizedResource>> e : byPatient.entrySet()) {
            PatientRun run = offline.run(patients.get(e.getKey()), e.getValue(), end);
            for (RuleEvaluation v : run.evaluations()) {
                evaluations.add(new DemoScenarioChecks.Evaluation(
                        v.patientId(),
                        v.ruleId(),
                        v.outcome().name(),
                        v.tier(),
                        v.reason() == null ? null : v.reason().code(),
                        hours(scenario, v.at())));
            }
            for (org.lungflag.rules.engine.Episode ep : run.episodes()) {
                episodes.add(new DemoScenarioChecks.Episode(
                        ep.patientId(),
                        ep.ruleId(),
                        hours(scenario, ep.start()),
                        ep.tier(),
                        ep.status() == EpisodeStatus.ACTIVE,
                        ep.end() == null ? null : hours(scenario, ep.end()),
                        ep.tierHistory().stream()
                                .map(t -> new DemoScenarioChecks.TierAt(t.tier(), hours(scenario, t.at())))
                                .toList()));
            }
            for (NormalizedResource r : e.getValue()) {
                for (ClinicalFact f : r.facts()) {
                    if (f instanceof Measurement m) {
                        for (UnitRepair repair : m.repairs()) {
                            repairs.add(new DemoScenarioChecks.Repair(
                                    e.getKey(), repair.code(), hours(scenario, m.time())));
                        }
                    }
                }
            }
        }
        episodes.forEach(ep -> System.out.println(
                "episode " + ep.patient() + " " + ep.rule() + ": " + DemoScenarioChecks.describe(ep)));
        List<String> problems = DemoScenarioChecks.mismatches(scenario.expectations(), evaluations, episodes, repairs);
        assertThat(problems).as("the engine against expected-advisories.csv").isEmpty();
    }

    private static double hours(DemoScenario scenario, Instant at) {
        return Duration.between(scenario.nominalStart(), at).toSeconds() / 3600.0;
    }
}
