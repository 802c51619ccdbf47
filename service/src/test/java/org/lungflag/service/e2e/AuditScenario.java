package org.lungflag.service.e2e;

import static org.lungflag.service.e2e.FhirFixtures.loinc;
import static org.lungflag.service.e2e.FhirFixtures.patient;
import static org.lungflag.service.e2e.FhirFixtures.setting;
import static org.lungflag.service.e2e.FhirFixtures.support;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.client.api.ServerValidationModeEnum;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.UUID;
import org.hl7.fhir.r4.model.Enumerations.AdministrativeGender;
import org.hl7.fhir.r4.model.Observation;

/**
 * Invented patients for the audit API and console tests, created on the embedded FHIR server so that they reach the
 * service through its Subscriptions (the real pipeline). Codes: the conformance package's input ValueSets (LOINC).
 *
 * <ul>
 *   <li>{@link #worsening}: height 175 cm (male, PBW 70.6 kg by the ARDSNet formula 50 + 0.91 × (175 − 152.4)),
 *       invasive ventilation, FiO2 0.50, PEEP 10 cmH2O, plateau 26 cmH2O, minute ventilation 9 L/min, PaCO2 48 and
 *       PaO2 80 mmHg at t0 (P/F 160: Berlin 2012 moderate, 100 &lt; P/F ≤ 200), then PaO2 45 at t0 + 2 h (P/F 90:
 *       severe, ≤ 100). Driving pressure 26 − 10 = 16 cmH2O (Amato 2015: plateau minus PEEP). Ventilatory ratio
 *       (Sinha 2009: VE × PaCO2 / (PBW × 100 × 37.5)) = 9000 × 48 / (70.6 × 3750) ≈ 1.63.
 *   <li>{@link #improving}: the same settings, PaO2 80 at t0 (moderate), then FiO2 0.30 / PaO2 100 (P/F 333, above
 *       Berlin's 300) at t0 + 4 h and t0 + 11 h: the episode resolves 6 h after the last value in a band (the
 *       hypoxemia rule's resolve-after default; the deadline is settled at the t0 + 11 h point and stamped with
 *       itself), so onset to resolution is 6 h.
 * </ul>
 */
final class AuditScenario {

    final IGenericClient fhir;

    AuditScenario() {
        this(SandboxServer.server().baseUrl());
    }

    AuditScenario(String fhirBaseUrl) {
        FhirContext ctx = FhirContext.forR4Cached();
        ctx.getRestfulClientFactory().setServerValidationMode(ServerValidationModeEnum.NEVER);
        this.fhir = ctx.newRestfulGenericClient(fhirBaseUrl);
    }

    /** What a scenario patient produced: its id and the PaO2 Observation ids. */
    record Made(String patient, String firstPao2, String secondPao2, Instant t0) {}

    String newPatient(String prefix) {
        String id = prefix + "-" + UUID.randomUUID().toString().substring(0, 8);
        fhir.update()
                .resource(patient(id, AdministrativeGender.MALE, "1961-04-02"))
                .execute();
        return id;
    }

    String create(Observation o) {
        return fhir.create()
                .resource(o)
                .execute()
                .getId()
                .toUnqualifiedVersionless()
                .getValue();
    }

    void ventilated(String p, Instant t0, double fio2) {
        create(loinc(p, "8302-2", 175, "cm", t0.minus(2, ChronoUnit.HOURS)));
        create(support(p, "invasive-ventilation", t0.minus(90, ChronoUnit.MINUTES)));
        create(setting(p, "19994-3", fio2, "1", t0.minus(40, ChronoUnit.MINUTES)));
        create(setting(p, "76248-4", 10, "cm[H2O]", t0.minus(40, ChronoUnit.MINUTES)));
        create(setting(p, "20112-9", 420, "mL", t0.minus(40, ChronoUnit.MINUTES)));
    }

    Made worsening(Instant t0) {
        String p = newPatient("api-w");
        ventilated(p, t0, 0.5);
        create(loinc(p, "76259-1", 26, "cm[H2O]", t0.minus(10, ChronoUnit.MINUTES)));
        create(loinc(p, "76009-0", 9, "L/min", t0.minus(10, ChronoUnit.MINUTES)));
        create(loinc(p, "2019-8", 48, "mm[Hg]", t0));
        String first = create(loinc(p, "2703-7", 80, "mm[Hg]", t0));
        create(setting(p, "19994-3", 0.5, "1", t0.plus(100, ChronoUnit.MINUTES)));
        create(setting(p, "76248-4", 10, "cm[H2O]", t0.plus(100, ChronoUnit.MINUTES)));
        String second = create(loinc(p, "2703-7", 45, "mm[Hg]", t0.plus(2, ChronoUnit.HOURS)));
        return new Made(p, first, second, t0);
    }

    Made improving(Instant t0) {
        String p = newPatient("api-i");
        ventilated(p, t0, 0.5);
        String first = create(loinc(p, "2703-7", 80, "mm[Hg]", t0));
        String last = null;
        for (int h : new int[] {4, 11}) {
            create(setting(p, "19994-3", 0.3, "1", t0.plus(h, ChronoUnit.HOURS).minus(30, ChronoUnit.MINUTES)));
            create(setting(
                    p, "76248-4", 8, "cm[H2O]", t0.plus(h, ChronoUnit.HOURS).minus(30, ChronoUnit.MINUTES)));
            last = create(loinc(p, "2703-7", 100, "mm[Hg]", t0.plus(h, ChronoUnit.HOURS)));
        }
        return new Made(p, first, last, t0);
    }

    /** A moderate-band gas only (P/F 160), e.g. while a rule runs silent. */
    Made moderateOnly(String prefix, Instant t0) {
        String p = newPatient(prefix);
        ventilated(p, t0, 0.5);
        String first = create(loinc(p, "2703-7", 80, "mm[Hg]", t0));
        return new Made(p, first, null, t0);
    }

    /** A PaO2 in a unit that is not UCUM ("mmHg" instead of "mm[H g]"): quarantined with unit-not-ucum. */
    String badUnit(String p, Instant at) {
        Observation o = loinc(p, "2703-7", 80, "mm[Hg]", at);
        o.getValueQuantity().setCode("mmHg");
        return create(o);
    }

    /** Other classes share the sandbox: stop its deliveries to this context before the context is closed. */
    static void deleteSubscriptionsOf(AuditScenario scenario, int port) {
        org.hl7.fhir.r4.model.Bundle subs = scenario.fhir
                .search()
                .forResource(org.hl7.fhir.r4.model.Subscription.class)
                .returnBundle(org.hl7.fhir.r4.model.Bundle.class)
                .execute();
        for (var entry : subs.getEntry()) {
            var s = (org.hl7.fhir.r4.model.Subscription) entry.getResource();
            if (s.getChannel().getEndpoint().endsWith(":" + port + "/fhir-hook")) {
                scenario.fhir.delete().resource(s).execute();
            }
        }
    }
}
