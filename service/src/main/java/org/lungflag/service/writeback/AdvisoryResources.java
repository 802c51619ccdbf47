package org.lungflag.service.writeback;

import java.time.Instant;
import java.util.ArrayList;
import java.util.Date;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Set;
import org.hl7.fhir.r4.model.CodeableConcept;
import org.hl7.fhir.r4.model.Coding;
import org.hl7.fhir.r4.model.DateTimeType;
import org.hl7.fhir.r4.model.Extension;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.Identifier;
import org.hl7.fhir.r4.model.InstantType;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Period;
import org.hl7.fhir.r4.model.Provenance;
import org.hl7.fhir.r4.model.Quantity;
import org.hl7.fhir.r4.model.Reference;
import org.hl7.fhir.r4.model.StringType;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.rules.catalog.RuleDefinition;
import org.lungflag.rules.catalog.RuleSource;
import org.lungflag.rules.catalog.Tier;
import org.lungflag.rules.engine.Episode;
import org.lungflag.rules.engine.EpisodeStatus;
import org.lungflag.rules.engine.RuleEvaluation;
import org.lungflag.rules.engine.UsedIndex;
import org.lungflag.rules.engine.UsedMeasurement;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.measure.SourceRef;

/**
 * Builds what Lungflag writes, exactly to its conformance package's profiles: the advisory Flag (one per episode,
 * identified by the episode key), its Provenance, and the derived-index Observations. Used by the live service,
 * the dry run and replay, so all three write the same thing.
 */
public final class AdvisoryResources {

    /** The Device that represents the software (the conformance package's {@code Device-lungflag.json}). */
    public static final String DEVICE_REFERENCE = "Device/lungflag";

    private static final String V3_DATA_OPERATION = "http://terminology.hl7.org/CodeSystem/v3-DataOperation";
    private static final String PARTICIPANT_TYPE = "http://terminology.hl7.org/CodeSystem/provenance-participant-type";

    private AdvisoryResources() {}

    /**
     * The Flag for an episode as of one evaluation that started, changed or continued it.
     *
     * @param mode {@code live}, {@code silent}, {@code replay} or {@code dry-run} (the advisory-mode CodeSystem)
     * @param derivedRefs versioned or logical references to derived-index Observations to cite as well, if written
     */
    public static Flag activeFlag(
            Episode episode, RuleEvaluation evaluation, RuleDefinition rule, String mode, List<String> derivedRefs) {
        Tier tier = rule.tier(episode.tier())
                .orElseThrow(() -> new IllegalStateException(
                        "rule " + rule.id() + " has no tier " + episode.tier() + " (catalog and engine disagree)"));
        Flag flag = new Flag();
        flag.getMeta().addProfile(LungflagFhir.Profiles.ADVISORY_FLAG);
        Set<String> details = new LinkedHashSet<>();
        for (UsedMeasurement m : evaluation.explanation().measurements()) {
            details.add(m.source().toString());
        }
        details.addAll(derivedRefs);
        for (String ref : details) {
            flag.addExtension(LungflagFhir.Extensions.FLAG_DETAIL, new Reference(ref));
        }
        flag.addExtension(
                LungflagFhir.Extensions.FLAG_PRIORITY,
                new CodeableConcept(new Coding(
                        LungflagFhir.Extensions.FLAG_PRIORITY_CODES,
                        tier.priority().code(),
                        tier.priority().display())));
        flag.addExtension(
                LungflagFhir.Extensions.ADVISORY_BASIS,
                new StringType(evaluation.explanation().basisText()));
        flag.addExtension(
                LungflagFhir.Extensions.ADVISORY_CAUTION,
                new StringType(evaluation.explanation().cautionText()));
        flag.addExtension(ruleExtension(rule));
        flag.addExtension(LungflagFhir.Extensions.ADVISORY_MODE, new org.hl7.fhir.r4.model.CodeType(mode));
        flag.addIdentifier(new Identifier()
                .setSystem(LungflagFhir.Identifiers.ADVISORY_EPISODE)
                .setValue(episode.key()));
        flag.setStatus(Flag.FlagStatus.ACTIVE);
        flag.addCategory(
                new CodeableConcept(new Coding(LungflagFhir.CodeSystems.FLAG_CATEGORY, "clinical", "Clinical")));
        CodeableConcept code =
                new CodeableConcept(new Coding(LungflagFhir.CodeSystems.ADVISORY, tier.code(), tier.display()));
        String text = evaluation.explanation().advisoryText();
        code.setText(text == null || text.isBlank() ? tier.display() : text);
        flag.setCode(code);
        flag.setSubject(new Reference("Patient/" + episode.patientId()));
        flag.setPeriod(new Period().setStartElement(new DateTimeType(Date.from(episode.start()))));
        flag.setAuthor(new Reference(DEVICE_REFERENCE));
        return flag;
    }

    /**
     * The Flag of an episode that ended: the last active Flag, made inactive with period.end, its basis extended
     * with why it ended.
     */
    public static Flag closedFlag(Flag lastActive, Episode episode, RuleEvaluation closing) {
        Flag flag = lastActive.copy();
        flag.setStatus(Flag.FlagStatus.INACTIVE);
        flag.getPeriod().setEndElement(new DateTimeType(Date.from(episode.end())));
        Extension basis = flag.getExtensionByUrl(LungflagFhir.Extensions.ADVISORY_BASIS);
        String why = episode.status() == EpisodeStatus.RESOLVED ? "Resolved" : "Expired";
        String closingText = closing == null || closing.explanation().basisText() == null
                ? ""
                : " " + closing.explanation().basisText();
        String detail =
                closing == null || closing.detail() == null || closing.detail().isBlank() ? "" : " " + closing.detail();
        basis.setValue(new StringType(((StringType) basis.getValue()).getValue() + " " + why + " at " + episode.end()
                + "." + (closingText.isBlank() ? detail : closingText)));
        return flag;
    }

    /** A Flag that should never have been raised (late data changed history): entered-in-error. */
    public static Flag withdrawnFlag(Flag lastWritten) {
        Flag flag = lastWritten.copy();
        flag.setStatus(Flag.FlagStatus.ENTEREDINERROR);
        Extension basis = flag.getExtensionByUrl(LungflagFhir.Extensions.ADVISORY_BASIS);
        basis.setValue(new StringType(((StringType) basis.getValue()).getValue()
                + " Withdrawn: data that arrived later changed the evaluation, so this advisory no longer applies."));
        return flag;
    }

    /** The versioned references of the measurements an evaluation used, in order, without repeats. */
    public static List<String> inputsOf(RuleEvaluation evaluation) {
        Set<String> inputs = new LinkedHashSet<>();
        for (UsedMeasurement m : evaluation.explanation().measurements()) {
            inputs.add(m.source().toString());
        }
        return List.copyOf(inputs);
    }

    /** The references a Flag cites in its flag-detail extensions. */
    public static List<String> detailsOf(Flag flag) {
        List<String> refs = new ArrayList<>();
        for (Extension e : flag.getExtensionsByUrl(LungflagFhir.Extensions.FLAG_DETAIL)) {
            if (e.getValue() instanceof Reference r && r.hasReference()) {
                refs.add(r.getReference());
            }
        }
        return refs;
    }

    /**
     * The Provenance of one Flag version (its target is set when the version is known).
     *
     * @param inputs the versioned references of the records the decision was derived from
     */
    public static Provenance provenance(List<String> inputs, RuleDefinition rule, Instant recorded, boolean created) {
        Provenance p = new Provenance();
        p.getMeta().addProfile(LungflagFhir.Profiles.ADVISORY_PROVENANCE);
        p.setRecordedElement(new InstantType(Date.from(recorded)));
        p.addPolicy(LungflagFhir.rulePolicy(rule.id(), rule.version()));
        p.setActivity(new CodeableConcept(
                new Coding(V3_DATA_OPERATION, created ? "CREATE" : "UPDATE", created ? "create" : "revise")));
        p.addAgent()
                .setType(new CodeableConcept(new Coding(PARTICIPANT_TYPE, "author", "Author")))
                .setWho(new Reference(DEVICE_REFERENCE));
        for (String ref : new LinkedHashSet<>(inputs)) {
            p.addEntity().setRole(Provenance.ProvenanceEntityRole.DERIVATION).setWhat(new Reference(ref));
        }
        return p;
    }

    /**
     * The identifier value of a derived-index Observation: the first 32 hex digits of SHA-256 over patient, index,
     * anchor time and formula (hex only, so it is safe in a conditional-update search URL).
     */
    public static String derivedIndexKey(String patientId, UsedIndex index, Instant anchor) {
        String readable = patientId + "|" + index.code().code() + "|" + anchor + "|" + index.formula();
        try {
            byte[] hash = java.security.MessageDigest.getInstance("SHA-256")
                    .digest(readable.getBytes(java.nio.charset.StandardCharsets.UTF_8));
            return java.util.HexFormat.of().formatHex(hash, 0, 16);
        } catch (java.security.NoSuchAlgorithmException e) {
            throw new IllegalStateException("SHA-256 is required by the Java platform", e);
        }
    }

    /** A transaction entry that creates the resource the first time and updates it in place after. */
    public static org.hl7.fhir.r4.model.Bundle.BundleEntryComponent conditionalUpdate(
            org.hl7.fhir.r4.model.Resource resource, String identifierSystem, String identifierValue) {
        var entry = new org.hl7.fhir.r4.model.Bundle.BundleEntryComponent();
        entry.setFullUrl("urn:uuid:"
                + java.util.UUID.nameUUIDFromBytes(
                        (identifierSystem + "|" + identifierValue).getBytes(java.nio.charset.StandardCharsets.UTF_8)));
        entry.setResource(resource);
        entry.getRequest()
                .setMethod(org.hl7.fhir.r4.model.Bundle.HTTPVerb.PUT)
                .setUrl(resource.fhirType() + "?identifier=" + identifierSystem + "|" + identifierValue);
        return entry;
    }

    /** A derived-index Observation for one computed index at one anchor time. */
    public static Observation derivedIndex(String patientId, UsedIndex index, Instant anchor, Instant issued) {
        Observation o = new Observation();
        o.getMeta().addProfile(LungflagFhir.Profiles.DERIVED_INDEX_OBSERVATION);
        o.addIdentifier(new Identifier()
                .setSystem(LungflagFhir.Identifiers.DERIVED_INDEX)
                .setValue(derivedIndexKey(patientId, index, anchor)));
        o.setStatus(Observation.ObservationStatus.FINAL);
        IndexCode code = index.code();
        CodeableConcept cc =
                new CodeableConcept(new Coding(LungflagFhir.CodeSystems.INDEX, code.code(), code.display()));
        code.loinc().ifPresent(loinc -> cc.addCoding(new Coding(LungflagFhir.CodeSystems.LOINC, loinc, null)));
        cc.setText(code.display());
        o.setCode(cc);
        o.setSubject(new Reference("Patient/" + patientId));
        o.setEffective(new DateTimeType(Date.from(anchor)));
        o.setIssuedElement(new InstantType(Date.from(issued)));
        o.setValue(new Quantity()
                .setValue(index.value())
                .setUnit(displayUnit(index.unit()))
                .setSystem(LungflagFhir.CodeSystems.UCUM)
                .setCode(index.unit()));
        o.setMethod(new CodeableConcept().setText(index.formula().toString()));
        o.setDevice(new Reference(DEVICE_REFERENCE));
        List<String> seen = new ArrayList<>();
        for (SourceRef input : index.inputs()) {
            if (!seen.contains(input.toString())) {
                seen.add(input.toString());
                o.addDerivedFrom(new Reference(input.toString()));
            }
        }
        if (!index.notes().isEmpty()) {
            o.addNote().setText(String.join(" ", index.notes()));
        }
        return o;
    }

    private static Extension ruleExtension(RuleDefinition rule) {
        Extension e = new Extension(LungflagFhir.Extensions.ADVISORY_RULE);
        e.addExtension("id", new StringType(rule.id()));
        e.addExtension("version", new StringType(rule.version()));
        e.addExtension("digest", new StringType(rule.digest()));
        String source = rule.sources().stream()
                .map(RuleSource::citation)
                .findFirst()
                .orElse("See the rule's README in the Lungflag catalog.");
        e.addExtension("source", new StringType(source));
        return e;
    }

    static String displayUnit(String ucum) {
        return switch (ucum) {
            case "mm[Hg]" -> "mmHg";
            case "cm[H2O]" -> "cmH2O";
            case "mL/cm[H2O]" -> "mL/cmH2O";
            default -> ucum;
        };
    }
}
