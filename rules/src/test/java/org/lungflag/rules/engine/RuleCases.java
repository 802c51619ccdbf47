package org.lungflag.rules.engine;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.time.LocalDate;
import java.time.ZoneOffset;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Set;
import org.lungflag.rules.measure.BodyPosition;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.PositionState;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.SupportState;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.rules.quality.DataQualityReason;
import org.snakeyaml.engine.v2.api.Load;
import org.snakeyaml.engine.v2.api.LoadSettings;

/**
 * A rule's {@code tests.yaml}: invented patients with timed facts and the outcomes the rule must give. Times are
 * written {@code "H:MM"} from a fixed base day (hours may pass 24); values are in canonical units (FiO2 and SpO2 as
 * fractions) unless a {@code unit} is given.
 */
record RuleCases(String rule, Path file, List<Case> cases) {

    private static final org.lungflag.rules.units.MeasurementNormalizer NORMALIZER =
            new org.lungflag.rules.units.MeasurementNormalizer();

    static final Instant BASE = Instant.parse("2024-03-01T00:00:00Z");

    private static final Set<String> CASE_KEYS =
            Set.of("name", "source", "patient", "facts", "expect", "advance_to", "episodes");
    private static final Set<String> FACT_KEYS =
            Set.of("at", "kind", "value", "role", "specimen", "support", "flow", "position", "unit", "id", "version");
    private static final Set<String> EXPECT_KEYS =
            Set.of("at", "outcome", "tier", "reason", "basis_contains", "caution_contains", "advisory_contains");

    record Case(
            String name,
            String source,
            PatientFacts patient,
            Double heightCm,
            List<Fact> facts,
            List<Expectation> expect,
            Instant advanceTo,
            List<EpisodeExpectation> episodes) {}

    /** One resource's fact, with the raw unit when one was given. */
    record Fact(ClinicalFact fact, String unit, double rawValue) {}

    record Expectation(
            Instant at,
            String outcome,
            String tier,
            DataQualityReason reason,
            String basisContains,
            String cautionContains,
            String advisoryContains) {}

    record EpisodeExpectation(Instant start, String status, Instant end, List<String> tiers) {}

    @SuppressWarnings("unchecked")
    static RuleCases read(Path file) {
        String text;
        try {
            text = Files.readString(file);
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
        Map<String, Object> doc =
                (Map<String, Object>) new Load(LoadSettings.builder().build()).loadFromString(text);
        String rule = (String) doc.get("rule");
        List<Case> cases = new ArrayList<>();
        int n = 0;
        for (Object o : (List<Object>) doc.get("cases")) {
            n++;
            Map<String, Object> c = (Map<String, Object>) o;
            check(c.keySet(), CASE_KEYS, file + " case " + n);
            String name = (String) c.get("name");
            Map<String, Object> p = (Map<String, Object>) c.getOrDefault("patient", Map.of());
            PatientFacts patient = patient(p, "pat-" + rule + "-" + n);
            Double height = p.get("height_cm") == null ? null : ((Number) p.get("height_cm")).doubleValue();
            List<Fact> facts = new ArrayList<>();
            int f = 0;
            if (height != null) {
                SourceRef src = SourceRef.observation("height-" + n, "1");
                facts.add(new Fact(
                        new Measurement(
                                QuantityKind.BODY_HEIGHT,
                                height,
                                BASE,
                                ValueRole.MEASUREMENT,
                                SpecimenKind.NOT_APPLICABLE,
                                src,
                                new OriginalQuantity(height, "cm"),
                                List.of()),
                        null,
                        height));
            }
            for (Object fo : (List<Object>) c.getOrDefault("facts", List.of())) {
                f++;
                Map<String, Object> fm = (Map<String, Object>) fo;
                check(fm.keySet(), FACT_KEYS, file + " case '" + name + "' fact " + f);
                facts.add(fact(fm, rule + "-" + n + "-" + f));
            }
            List<Expectation> expect = new ArrayList<>();
            for (Object eo : (List<Object>) c.getOrDefault("expect", List.of())) {
                Map<String, Object> em = (Map<String, Object>) eo;
                check(em.keySet(), EXPECT_KEYS, file + " case '" + name + "' expectation");
                String reason = (String) em.get("reason");
                expect.add(new Expectation(
                        time(em.get("at")),
                        ((String) em.get("outcome")).toUpperCase(Locale.ROOT),
                        (String) em.get("tier"),
                        reason == null
                                ? null
                                : DataQualityReason.fromCode(reason)
                                        .orElseThrow(() ->
                                                new IllegalArgumentException(file + ": unknown reason " + reason)),
                        (String) em.get("basis_contains"),
                        (String) em.get("caution_contains"),
                        (String) em.get("advisory_contains")));
            }
            List<EpisodeExpectation> episodes = null;
            if (c.containsKey("episodes")) {
                episodes = new ArrayList<>();
                for (Object eo : (List<Object>) c.get("episodes")) {
                    Map<String, Object> em = (Map<String, Object>) eo;
                    episodes.add(new EpisodeExpectation(
                            time(em.get("start")),
                            ((String) em.get("status")).toUpperCase(Locale.ROOT),
                            em.get("end") == null ? null : time(em.get("end")),
                            (List<String>) em.getOrDefault("tiers", List.of())));
                }
            }
            cases.add(new Case(
                    name,
                    (String) c.get("source"),
                    patient,
                    height,
                    facts,
                    expect,
                    c.get("advance_to") == null ? null : time(c.get("advance_to")),
                    episodes));
        }
        return new RuleCases(rule, file, cases);
    }

    private static void check(Set<String> keys, Set<String> allowed, String where) {
        for (String k : keys) {
            if (!allowed.contains(k)) {
                throw new IllegalArgumentException(where + ": unknown key '" + k + "' (allowed: " + allowed + ")");
            }
        }
    }

    private static PatientFacts patient(Map<String, Object> p, String id) {
        Sex sex = p.get("sex") == null ? Sex.UNKNOWN : Sex.valueOf(((String) p.get("sex")).toUpperCase(Locale.ROOT));
        LocalDate birth = null;
        if (p.get("age") != null) {
            int age = ((Number) p.get("age")).intValue();
            birth = BASE.atZone(ZoneOffset.UTC).toLocalDate().minusYears(age).minusDays(30);
        }
        return new PatientFacts(id, sex, birth);
    }

    static Instant time(Object o) {
        String s = String.valueOf(o);
        String[] hm = s.split(":");
        if (hm.length != 2) {
            throw new IllegalArgumentException("a case time is H:MM from the base day, got " + s);
        }
        return BASE.plus(Duration.ofHours(Long.parseLong(hm[0]))).plus(Duration.ofMinutes(Long.parseLong(hm[1])));
    }

    private static Fact fact(Map<String, Object> f, String id) {
        Instant at = time(f.get("at"));
        String version = f.get("version") == null ? "1" : String.valueOf(f.get("version"));
        SourceRef src = SourceRef.observation(f.get("id") == null ? id : String.valueOf(f.get("id")), version);
        if (f.containsKey("support")) {
            SupportMode mode = SupportMode.valueOf(
                    ((String) f.get("support")).toUpperCase(Locale.ROOT).replace('-', '_'));
            Double flow = f.get("flow") == null ? null : ((Number) f.get("flow")).doubleValue();
            return new Fact(new SupportState(mode, flow, at, src), null, Double.NaN);
        }
        if (f.containsKey("position")) {
            BodyPosition pos = BodyPosition.valueOf(((String) f.get("position")).toUpperCase(Locale.ROOT));
            return new Fact(new PositionState(pos, at, src), null, Double.NaN);
        }
        QuantityKind kind = QuantityKind.valueOf(
                ((String) f.get("kind")).toUpperCase(Locale.ROOT).replace('-', '_'));
        double value = ((Number) f.get("value")).doubleValue();
        ValueRole role = f.get("role") == null
                ? defaultRole(kind)
                : ValueRole.valueOf(((String) f.get("role")).toUpperCase(Locale.ROOT));
        SpecimenKind specimen = f.get("specimen") != null
                ? SpecimenKind.valueOf(
                        ((String) f.get("specimen")).toUpperCase(Locale.ROOT).replace('-', '_'))
                : kind.isBloodSample() ? SpecimenKind.ARTERIAL : SpecimenKind.NOT_APPLICABLE;
        String unit = (String) f.get("unit");
        if (unit != null) {
            // through the real normalizer, as the service and replay do
            var result = NORMALIZER.normalize(
                    new org.lungflag.rules.units.RawMeasurement(kind, value, unit, at, role, specimen, src));
            if (result instanceof org.lungflag.rules.units.NormalizationResult.Accepted a) {
                return new Fact(a.measurement(), unit, value);
            }
            throw new IllegalArgumentException("fact " + id + " was refused by the normalizer: " + result);
        }
        Measurement m = new Measurement(
                kind,
                value,
                at,
                role,
                specimen,
                src,
                new OriginalQuantity(value, unit == null ? kind.canonicalUnit() : unit),
                List.of());
        return new Fact(m, unit, value);
    }

    private static ValueRole defaultRole(QuantityKind kind) {
        return kind == QuantityKind.FIO2 || kind == QuantityKind.PEEP ? ValueRole.SETTING : ValueRole.MEASUREMENT;
    }
}
