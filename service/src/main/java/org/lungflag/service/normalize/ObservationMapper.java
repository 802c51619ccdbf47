package org.lungflag.service.normalize;

import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Optional;
import org.hl7.fhir.r4.model.CodeableConcept;
import org.hl7.fhir.r4.model.Coding;
import org.hl7.fhir.r4.model.DateTimeType;
import org.hl7.fhir.r4.model.DeviceMetric;
import org.hl7.fhir.r4.model.InstantType;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Period;
import org.hl7.fhir.r4.model.Quantity;
import org.hl7.fhir.r4.model.Reference;
import org.hl7.fhir.r4.model.Resource;
import org.hl7.fhir.r4.model.Specimen;
import org.hl7.fhir.r4.model.Type;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.rules.measure.BodyPosition;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.PositionState;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.SupportState;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.quality.DataQualityReason;
import org.lungflag.service.normalize.MappingOutcome.PartRefusal;
import org.lungflag.service.normalize.MappingOutcome.Refused;
import org.lungflag.service.normalize.MappingOutcome.Retracted;
import org.lungflag.service.normalize.MappingOutcome.Usable;
import org.lungflag.service.normalize.SpecimenLookup.SpecimenFacts;
import org.lungflag.service.normalize.SpecimenLookup.SpecimenUnavailable;

/**
 * Reads what Lungflag needs off one FHIR R4 Observation: which quantity kind it is (LOINC, IEEE 11073 MDC,
 * Lungflag input codes or the site's ConceptMap), the value and unit as sent, the clinical time, the subject, the
 * specimen kind (Specimen.type wins over the LOINC system axis), and setting vs measurement. It converts no units:
 * {@code Normalizer} does that with the UCUM library. Plain Java, shared by the live service and replay.
 */
public final class ObservationMapper {

    static final String UCUM = "http://unitsofmeasure.org";
    public static final String SUPPORT_MODE_SYSTEM = LungflagFhir.CodeSystems.RESPIRATORY_SUPPORT;
    public static final String BODY_POSITION_SYSTEM = LungflagFhir.CodeSystems.BODY_POSITION;
    /** Observation.category codes that say whether a device value is a setting or a measurement. */
    public static final String VALUE_ROLE_SYSTEM = LungflagFhir.CodeSystems.VALUE_ROLE;

    private static final String OBSERVATION_CATEGORY = "http://terminology.hl7.org/CodeSystem/observation-category";

    /** FHIR R4 {@code id} (and {@code versionId}) syntax, https://hl7.org/fhir/R4/datatypes.html#id. */
    static final String FHIR_ID_RULE = "1 to 64 of A-Z, a-z, 0-9, '-' and '.'";

    private final CodeMap codes;
    private final Duration futureSkew;

    public ObservationMapper(CodeMap codes, Duration futureSkew) {
        this.codes = codes;
        this.futureSkew = futureSkew;
    }

    public CodeMap codes() {
        return codes;
    }

    /**
     * Maps one Observation version.
     *
     * @param now the receiving clock, for the future-time check
     * @throws SpecimenUnavailable when a referenced Specimen cannot be read right now; retry later
     */
    public MappingOutcome map(Observation obs, Instant now, SpecimenLookup specimens) throws SpecimenUnavailable {
        String id = obs.getIdElement().getIdPart();
        String version = obs.getIdElement().getVersionIdPart();
        if (version == null && obs.getMeta().hasVersionId()) {
            version = obs.getMeta().getVersionId();
        }
        if (id == null || id.isBlank()) {
            return new Refused(
                    null,
                    null,
                    DataQualityReason.MALFORMED_RESOURCE,
                    "The Observation has no id, so it cannot be traced.");
        }
        if (!isFhirId(id) || (version != null && !isFhirId(version))) {
            return new Refused(
                    null,
                    null,
                    DataQualityReason.MALFORMED_RESOURCE,
                    "The Observation's id or version is not a valid FHIR id (" + FHIR_ID_RULE
                            + "), so it cannot be traced.");
        }
        SourceRef source = SourceRef.observation(id, version);
        String patientId = patientId(obs.getSubject());
        if (patientId != null && !isFhirId(patientId)) {
            return new Refused(
                    source,
                    null,
                    DataQualityReason.MISSING_SUBJECT,
                    "Observation/" + id + " has a subject reference whose Patient id is not a valid FHIR id ("
                            + FHIR_ID_RULE + ").");
        }

        if (obs.getStatus() == Observation.ObservationStatus.ENTEREDINERROR) {
            return new Retracted(source, patientId);
        }
        if (patientId == null) {
            return new Refused(
                    source,
                    null,
                    DataQualityReason.MISSING_SUBJECT,
                    "Observation/" + id + " has no subject reference to a Patient"
                            + (obs.getSubject().hasReference() ? " (subject is " + typeOf(obs.getSubject()) + ")" : "")
                            + ".");
        }
        if (!usableStatus(obs.getStatus())) {
            return new Refused(
                    source,
                    patientId,
                    DataQualityReason.STATUS_NOT_USABLE,
                    "Observation/" + id + " has status "
                            + (obs.hasStatus() ? obs.getStatus().toCode() : "(none)")
                            + "; only final, amended and corrected results are used.");
        }

        Optional<CodeMapping> top = mappingOf(obs.getCode(), obs.getCategory());
        List<ComponentMapping> components = new ArrayList<>();
        for (int i = 0; i < obs.getComponent().size(); i++) {
            Observation.ObservationComponentComponent c = obs.getComponent().get(i);
            Optional<CodeMapping> m = mappingOf(c.getCode(), obs.getCategory());
            if (m.isPresent()) {
                components.add(new ComponentMapping(i, c, m.get()));
            }
        }
        if (top.isEmpty() && components.isEmpty()) {
            return new Refused(
                    source,
                    patientId,
                    DataQualityReason.UNKNOWN_CODE,
                    "Observation/" + id + " has no code Lungflag maps (codings: " + codingsOf(obs.getCode())
                            + "); add it to the site ConceptMap if it is an input Lungflag should use.");
        }

        boolean anyBlood = top.map(m -> m.kind().isBloodSample()).orElse(false)
                || components.stream().anyMatch(c -> c.mapping().kind().isBloodSample());
        SpecimenFacts specimen = anyBlood ? specimenOf(obs, specimens) : null;

        Instant time = clinicalTime(obs, specimen);
        if (time == null) {
            return new Refused(
                    source,
                    patientId,
                    DataQualityReason.MISSING_TIME,
                    "Observation/" + id + " has no effective time (effectiveDateTime, effectiveInstant or"
                            + " effectivePeriod.start) and no specimen collection time.");
        }
        if (time.isAfter(now.plus(futureSkew))) {
            return new Refused(
                    source,
                    patientId,
                    DataQualityReason.FUTURE_TIME,
                    "Observation/" + id + " has clinical time " + time + ", later than the receiving clock " + now
                            + " plus the allowed skew of " + futureSkew.toMinutes() + " min.");
        }
        ValueRole roleOverride = roleFromDevice(obs);
        if (roleOverride == null) {
            roleOverride = roleFromCategory(obs.getCategory());
        }

        List<RawReading> readings = new ArrayList<>();
        List<ClinicalFact> states = new ArrayList<>();
        List<PartRefusal> refused = new ArrayList<>();
        if (top.isPresent()) {
            CodeMapping m = top.get();
            readValue(
                    m,
                    obs.getValue(),
                    "value",
                    time,
                    roleOverride,
                    specimen,
                    source,
                    obs.getComponent(),
                    readings,
                    states,
                    refused,
                    !components.isEmpty());
        }
        for (ComponentMapping c : components) {
            readValue(
                    c.mapping(),
                    c.component().getValue(),
                    "component[" + c.index() + "]",
                    time,
                    roleOverride,
                    specimen,
                    source,
                    List.of(),
                    readings,
                    states,
                    refused,
                    false);
        }
        if (readings.isEmpty() && states.isEmpty()) {
            PartRefusal first = refused.isEmpty()
                    ? new PartRefusal(
                            "value",
                            DataQualityReason.MISSING_VALUE,
                            "Observation/" + id + " carries no value Lungflag can use.")
                    : refused.get(0);
            return new Refused(source, patientId, first.reason(), first.detail());
        }
        return new Usable(source, patientId, readings, states, refused);
    }

    private record ComponentMapping(
            int index, Observation.ObservationComponentComponent component, CodeMapping mapping) {}

    private void readValue(
            CodeMapping m,
            Type value,
            String part,
            Instant time,
            ValueRole roleOverride,
            SpecimenFacts specimen,
            SourceRef source,
            List<Observation.ObservationComponentComponent> siblings,
            List<RawReading> readings,
            List<ClinicalFact> states,
            List<PartRefusal> refused,
            boolean valueOptional) {
        QuantityKind kind = m.kind();
        if (kind == QuantityKind.RESPIRATORY_SUPPORT) {
            Optional<SupportMode> mode = supportMode(value);
            if (mode.isEmpty()) {
                refused.add(new PartRefusal(
                        part,
                        DataQualityReason.MISSING_VALUE,
                        where(source, part) + " (respiratory support) needs a valueCodeableConcept from "
                                + SUPPORT_MODE_SYSTEM));
                return;
            }
            states.add(new SupportState(mode.get(), flowOf(siblings), time, source));
            return;
        }
        if (kind == QuantityKind.BODY_POSITION) {
            Optional<BodyPosition> position = bodyPosition(value);
            if (position.isEmpty()) {
                refused.add(new PartRefusal(
                        part,
                        DataQualityReason.MISSING_VALUE,
                        where(source, part) + " (body position) needs a valueCodeableConcept from "
                                + BODY_POSITION_SYSTEM));
                return;
            }
            states.add(new PositionState(position.get(), time, source));
            return;
        }
        if (!(value instanceof Quantity q) || !q.hasValue()) {
            if (!valueOptional) {
                refused.add(new PartRefusal(
                        part,
                        DataQualityReason.MISSING_VALUE,
                        where(source, part) + " (" + kind.label() + ") has no numeric valueQuantity"
                                + (value == null ? "" : " (it has a " + value.fhirType() + ")")
                                + "."));
            }
            return;
        }
        double number = q.getValue().doubleValue();
        String unit = unitOf(q);
        ValueRole role = roleOverride != null ? roleOverride : m.role();
        SpecimenKind specimenKind =
                kind.isBloodSample() ? specimenKind(m.specimen(), specimen) : SpecimenKind.NOT_APPLICABLE;
        readings.add(new RawReading(kind, number, unit, time, role, specimenKind, source, part));
    }

    /** The first mapped coding, preferring pulse oximetry when 2708-6 travels with 59408-5 or MDC 150456. */
    Optional<CodeMapping> mappingOf(CodeableConcept code, List<CodeableConcept> categories) {
        CodeMapping loinc = null;
        CodeMapping other = null;
        boolean spo2 = false;
        boolean only2708 = false;
        for (Coding c : code.getCoding()) {
            Optional<CodeMapping> m = codes.lookup(c.getSystem(), c.getCode());
            if (m.isEmpty()) {
                continue;
            }
            if (m.get().kind() == QuantityKind.SPO2) {
                spo2 = true;
            }
            if (CodeMap.LOINC.equals(c.getSystem())) {
                if (loinc == null) {
                    loinc = m.get();
                    only2708 = CodeMap.LOINC_SAO2_OR_SPO2.equals(c.getCode());
                }
            } else if (other == null) {
                other = m.get();
            }
        }
        CodeMapping chosen = loinc != null ? loinc : other;
        if (chosen == null) {
            return Optional.empty();
        }
        if (spo2 || (only2708 && hasCategory(categories, OBSERVATION_CATEGORY, "vital-signs"))) {
            // 2708-6 with pulse-oximetry evidence is SpO2, not an arterial blood SaO2 (clinical-reference §11.3)
            return Optional.of(new CodeMapping(
                    QuantityKind.SPO2, ValueRole.MEASUREMENT, SpecimenKind.NOT_APPLICABLE, "pulse-oximetry evidence"));
        }
        return Optional.of(chosen);
    }

    /** Where a refused part is: built only when a part is refused. */
    private static String where(SourceRef source, String part) {
        return source.unversioned() + " " + part;
    }

    private static boolean hasCategory(List<CodeableConcept> categories, String system, String code) {
        for (CodeableConcept cc : categories) {
            for (Coding c : cc.getCoding()) {
                if (system.equals(c.getSystem()) && code.equals(c.getCode())) {
                    return true;
                }
            }
        }
        return false;
    }

    private static ValueRole roleFromCategory(List<CodeableConcept> categories) {
        if (hasCategory(categories, VALUE_ROLE_SYSTEM, "setting")) {
            return ValueRole.SETTING;
        }
        if (hasCategory(categories, VALUE_ROLE_SYSTEM, "measurement")) {
            return ValueRole.MEASUREMENT;
        }
        return null;
    }

    /**
     * The conformance package's ventilator profile: Observation.device may point at a DeviceMetric whose category
     * says setting or measurement (contained metrics are read here; others fall back to the code's role).
     */
    private static ValueRole roleFromDevice(Observation obs) {
        if (!obs.hasDevice()
                || !obs.getDevice().hasReference()
                || !obs.getDevice().getReference().startsWith("#")) {
            return null;
        }
        String id = obs.getDevice().getReference().substring(1);
        for (Resource r : obs.getContained()) {
            if (r instanceof DeviceMetric metric && id.equals(r.getIdElement().getIdPart()) && metric.hasCategory()) {
                return switch (metric.getCategory()) {
                    case SETTING -> ValueRole.SETTING;
                    case MEASUREMENT -> ValueRole.MEASUREMENT;
                    default -> null;
                };
            }
        }
        return null;
    }

    private static boolean usableStatus(Observation.ObservationStatus status) {
        return status == Observation.ObservationStatus.FINAL
                || status == Observation.ObservationStatus.AMENDED
                || status == Observation.ObservationStatus.CORRECTED;
    }

    /** {@code Patient/123} or an absolute URL ending in it; anything else is not a patient subject. */
    /** Whether {@code s} is a valid FHIR R4 id (resource ids and version ids alike). */
    public static boolean isFhirId(String s) {
        // FHIR R4 id: [A-Za-z0-9\-.]{1,64}, checked by hand rather than with a regex matcher per call (up to three
        // ids per Observation version)
        if (s == null || s.isEmpty() || s.length() > 64) {
            return false;
        }
        for (int i = 0; i < s.length(); i++) {
            char c = s.charAt(i);
            boolean ok =
                    (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || (c >= '0' && c <= '9') || c == '-' || c == '.';
            if (!ok) {
                return false;
            }
        }
        return true;
    }

    static String patientId(Reference subject) {
        if (subject == null || !subject.hasReference()) {
            return null;
        }
        var ref = subject.getReferenceElement();
        if (!"Patient".equals(ref.getResourceType()) || !ref.hasIdPart()) {
            return null;
        }
        return ref.getIdPart();
    }

    private static String typeOf(Reference subject) {
        String type = subject.getReferenceElement().getResourceType();
        return type == null ? "not a resource reference" : "a " + type;
    }

    private static String codingsOf(CodeableConcept code) {
        if (!code.hasCoding()) {
            return "none";
        }
        StringBuilder sb = new StringBuilder();
        for (Coding c : code.getCoding()) {
            if (!sb.isEmpty()) {
                sb.append(", ");
            }
            sb.append(c.hasSystem() ? c.getSystem() : "(no system)").append('|').append(c.getCode());
        }
        return sb.toString();
    }

    private static String unitOf(Quantity q) {
        if (q.hasCode() && (!q.hasSystem() || UCUM.equals(q.getSystem()))) {
            return q.getCode();
        }
        if (q.hasSystem() && !UCUM.equals(q.getSystem())) {
            return null; // a non-UCUM unit system: the normalizer refuses it as unknown-unit
        }
        return q.hasUnit() ? q.getUnit() : null;
    }

    private static Instant clinicalTime(Observation obs, SpecimenFacts specimen) {
        if (specimen != null && specimen.collectedAt() != null) {
            return specimen.collectedAt();
        }
        Type effective = obs.getEffective();
        if (effective instanceof DateTimeType dt && dt.getValue() != null) {
            return dt.getValue().toInstant();
        }
        if (effective instanceof InstantType it && it.getValue() != null) {
            return it.getValue().toInstant();
        }
        if (effective instanceof Period p && p.hasStart()) {
            return p.getStart().toInstant();
        }
        return null;
    }

    private static SpecimenFacts specimenOf(Observation obs, SpecimenLookup lookup) throws SpecimenUnavailable {
        if (!obs.hasSpecimen()) {
            return null;
        }
        Reference ref = obs.getSpecimen();
        Resource contained = ref.getResource() instanceof Resource r ? r : null;
        if (contained == null && ref.hasReference() && ref.getReference().startsWith("#")) {
            for (Resource r : obs.getContained()) {
                if (ref.getReference().substring(1).equals(r.getIdElement().getIdPart())) {
                    contained = r;
                }
            }
        }
        if (contained instanceof Specimen s) {
            return facts(s);
        }
        if (!ref.hasReference()) {
            return null;
        }
        var id = ref.getReferenceElement();
        if (!"Specimen".equals(id.getResourceType()) || !isFhirId(id.getIdPart())) {
            return null; // not a reference to a Specimen that could be read: the code's own specimen axis decides
        }
        return lookup.lookup(id.getResourceType() + "/" + id.getIdPart()).orElse(null);
    }

    /** The facts a Specimen resource carries. */
    public static SpecimenFacts facts(Specimen s) {
        SpecimenKind kind = SpecimenCodes.kind(s.getType()).orElse(SpecimenKind.UNKNOWN);
        Instant collected = null;
        if (s.getCollection().getCollected() instanceof DateTimeType dt && dt.getValue() != null) {
            collected = dt.getValue().toInstant();
        } else if (s.getCollection().getCollected() instanceof Period p && p.hasStart()) {
            collected = p.getStart().toInstant();
        }
        return new SpecimenFacts(kind, collected);
    }

    /** Specimen.type is specific evidence and wins over the LOINC system axis; "blood, unspecified" does not. */
    private static SpecimenKind specimenKind(SpecimenKind fromCode, SpecimenFacts specimen) {
        if (specimen == null || specimen.kind() == SpecimenKind.UNKNOWN) {
            return fromCode;
        }
        return specimen.kind();
    }

    private static Double flowOf(List<Observation.ObservationComponentComponent> components) {
        for (Observation.ObservationComponentComponent c : components) {
            for (Coding coding : c.getCode().getCoding()) {
                if (CodeMap.LOINC.equals(coding.getSystem())
                        && "3151-8".equals(coding.getCode())
                        && c.getValue() instanceof Quantity q
                        && q.hasValue()
                        && "L/min".equals(unitOf(q))) {
                    return q.getValue().doubleValue();
                }
            }
        }
        return null;
    }

    private static Optional<SupportMode> supportMode(Type value) {
        if (!(value instanceof CodeableConcept cc)) {
            return Optional.empty();
        }
        for (Coding c : cc.getCoding()) {
            if (SUPPORT_MODE_SYSTEM.equals(c.getSystem()) && c.getCode() != null) {
                switch (c.getCode()) {
                    case "invasive-ventilation" -> {
                        return Optional.of(SupportMode.INVASIVE_VENTILATION);
                    }
                    case "non-invasive-ventilation" -> {
                        return Optional.of(SupportMode.NON_INVASIVE_VENTILATION);
                    }
                    case "high-flow-nasal-oxygen" -> {
                        return Optional.of(SupportMode.HIGH_FLOW_NASAL_OXYGEN);
                    }
                    case "conventional-oxygen" -> {
                        return Optional.of(SupportMode.CONVENTIONAL_OXYGEN);
                    }
                    case "room-air" -> {
                        return Optional.of(SupportMode.ROOM_AIR);
                    }
                    default -> {}
                }
            }
        }
        return Optional.empty();
    }

    private static Optional<BodyPosition> bodyPosition(Type value) {
        if (!(value instanceof CodeableConcept cc)) {
            return Optional.empty();
        }
        for (Coding c : cc.getCoding()) {
            if (BODY_POSITION_SYSTEM.equals(c.getSystem()) && c.getCode() != null) {
                switch (c.getCode()) {
                    case "prone" -> {
                        return Optional.of(BodyPosition.PRONE);
                    }
                    case "supine" -> {
                        return Optional.of(BodyPosition.SUPINE);
                    }
                    case "other" -> {
                        return Optional.of(BodyPosition.OTHER);
                    }
                    default -> {}
                }
            }
        }
        return Optional.empty();
    }
}
