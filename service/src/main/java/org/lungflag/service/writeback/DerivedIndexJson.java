package org.lungflag.service.writeback;

import ca.uhn.fhir.context.FhirContext;
import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonGenerator;
import java.io.IOException;
import java.io.StringWriter;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.security.MessageDigest;
import java.security.NoSuchAlgorithmException;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Date;
import java.util.HexFormat;
import java.util.List;
import org.hl7.fhir.r4.model.DateTimeType;
import org.hl7.fhir.r4.model.InstantType;
import org.hl7.fhir.r4.model.Quantity;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.rules.engine.UsedIndex;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.service.normalize.ObservationMapper;

/**
 * The JSON of {@link AdvisoryResources#derivedIndex}'s Observation, written straight into a string instead of
 * building the HAPI resource and encoding it (replay writes one per index and anchor time, and building plus
 * encoding them was a quarter of its time). The output is the same text HAPI's JSON parser writes for that
 * Observation: the same elements in the order of the R4 Observation definition, empty ones left out, strings
 * escaped as Jackson (HAPI's JSON writer) escapes them, and every primitive's text (decimal, dateTime, instant)
 * taken from the HAPI datatype itself. Anything this writer does not handle the same way for certain (an id that is
 * not a plain FHIR id, text with surrounding whitespace or control characters, a value that is not finite, a
 * missing unit or display) goes through the HAPI builder and encoder instead. DerivedIndexJsonTest compares both,
 * parses the result back with HAPI and validates it against the profile.
 *
 * <p>Keep in step with {@link AdvisoryResources#derivedIndex}: a change there must be made here too (the test
 * fails otherwise).
 */
public final class DerivedIndexJson {

    /**
     * A resource type as a reference writes it: {@code [A-Z][A-Za-z]{0,63}}, checked by hand like {@link
     * ObservationMapper#isFhirId} (a regular expression per reference was a tenth of this writer's time in replay).
     */
    static boolean isResourceType(String s) {
        int n = s.length();
        if (n < 1 || n > 64 || s.charAt(0) < 'A' || s.charAt(0) > 'Z') {
            return false;
        }
        for (int i = 1; i < n; i++) {
            char c = s.charAt(i);
            if (!(c >= 'A' && c <= 'Z' || c >= 'a' && c <= 'z')) {
                return false;
            }
        }
        return true;
    }

    private static final JsonFactory JSON = new JsonFactory();

    private final FhirContext fhir;

    public DerivedIndexJson(FhirContext fhir) {
        this.fhir = fhir;
    }

    /** The issued time as the derived-index Observation writes it (one per patient run; compute it once). */
    public static String instantText(Instant issued) {
        return new InstantType(Date.from(issued)).getValueAsString();
    }

    /**
     * The derived-index Observation of {@code index} at {@code anchor}, as one line of JSON.
     *
     * @param issuedText {@link #instantText(Instant)} of {@code issued}
     */
    public String encode(String patientId, UsedIndex index, Instant anchor, Instant issued, String issuedText) {
        String unit = index.unit();
        String displayUnit = unit == null ? null : AdvisoryResources.displayUnit(unit);
        IndexCode code = index.code();
        String notes = String.join(" ", index.notes());
        String formula = index.formula().toString();
        List<String> derivedFrom = new ArrayList<>(index.inputs().size());
        boolean plain = ObservationMapper.isFhirId(patientId)
                && Double.isFinite(index.value())
                && plainText(code.code())
                && plainText(code.display())
                && code.loinc().map(DerivedIndexJson::plainText).orElse(true)
                && plainText(unit)
                && plainText(displayUnit)
                && plainText(formula)
                && (index.notes().isEmpty() || plainText(notes));
        for (SourceRef input : index.inputs()) {
            if (!plain) {
                break;
            }
            plain = isResourceType(input.resourceType())
                    && ObservationMapper.isFhirId(input.id())
                    && (input.version() == null || ObservationMapper.isFhirId(input.version()));
            String ref = input.toString();
            if (!derivedFrom.contains(ref)) {
                derivedFrom.add(ref);
            }
        }
        if (!plain) {
            return fhir.newJsonParser()
                    .encodeResourceToString(AdvisoryResources.derivedIndex(patientId, index, anchor, issued));
        }
        StringBuilder out = new StringBuilder(1200);
        out.append(HEAD);
        out.append(derivedIndexKey(patientId, code.code(), anchorText(anchor), formula));
        out.append("\"}],\"status\":\"final\",\"code\":{\"coding\":[{\"system\":\"")
                .append(LungflagFhir.CodeSystems.INDEX)
                .append("\",\"code\":");
        string(out, code.code()).append(",\"display\":");
        string(out, code.display()).append('}');
        if (code.loinc().isPresent()) {
            out.append(",{\"system\":\"").append(LungflagFhir.CodeSystems.LOINC).append("\",\"code\":");
            string(out, code.loinc().get()).append('}');
        }
        out.append("],\"text\":");
        string(out, code.display());
        out.append("},\"subject\":{\"reference\":\"Patient/").append(patientId);
        out.append("\"},\"effectiveDateTime\":\"").append(dateTimeText(anchor));
        out.append("\",\"issued\":\"").append(issuedText);
        out.append("\",\"valueQuantity\":{\"value\":")
                .append(new Quantity().setValue(index.value()).getValueElement().getValueAsString());
        out.append(",\"unit\":");
        string(out, displayUnit).append(",\"system\":\"").append(LungflagFhir.CodeSystems.UCUM);
        out.append("\",\"code\":");
        string(out, unit).append('}');
        if (!index.notes().isEmpty()) {
            out.append(",\"note\":[{\"text\":");
            string(out, notes).append("}]");
        }
        out.append(",\"method\":{\"text\":");
        string(out, formula)
                .append("},\"device\":{\"reference\":\"")
                .append(AdvisoryResources.DEVICE_REFERENCE)
                .append("\"}");
        if (!derivedFrom.isEmpty()) {
            out.append(",\"derivedFrom\":[");
            for (int i = 0; i < derivedFrom.size(); i++) {
                // FHIR ids and resource types: nothing to escape
                out.append(i == 0 ? "{\"reference\":\"" : ",{\"reference\":\"")
                        .append(derivedFrom.get(i))
                        .append("\"}");
            }
            out.append(']');
        }
        return out.append('}').toString();
    }

    /**
     * {@code {"resourceType":"Observation","meta":{...},"identifier":[{"system":...,"value":"}: what every
     * derived-index Observation starts with, the URLs written as Jackson (HAPI's JSON writer) writes them.
     */
    private static final String HEAD = head();

    private static String head() {
        StringWriter w = new StringWriter();
        try (JsonGenerator g = JSON.createGenerator(w)) {
            g.writeStartObject();
            g.writeStringField("resourceType", "Observation");
            g.writeObjectFieldStart("meta");
            g.writeArrayFieldStart("profile");
            g.writeString(LungflagFhir.Profiles.DERIVED_INDEX_OBSERVATION);
            g.writeEndArray();
            g.writeEndObject();
            g.writeArrayFieldStart("identifier");
            g.writeStartObject();
            g.writeStringField("system", LungflagFhir.Identifiers.DERIVED_INDEX);
            g.writeStringField("value", "");
            g.flush();
            String text = w.toString(); // before close() ends the open objects
            return text.substring(0, text.length() - 1); // up to the value's opening quote
        } catch (IOException e) {
            throw new UncheckedIOException("writing to a string cannot fail", e);
        }
    }

    /**
     * A JSON string as Jackson writes it for {@link #plainText} (no control characters): quoted, with {@code "}
     * and {@code \} escaped by a backslash.
     */
    private static StringBuilder string(StringBuilder out, String s) {
        out.append('"');
        for (int i = 0; i < s.length(); i++) {
            char c = s.charAt(i);
            if (c == '"' || c == '\\') {
                out.append('\\');
            }
            out.append(c);
        }
        return out.append('"');
    }

    private static final ThreadLocal<MessageDigest> SHA256 = ThreadLocal.withInitial(() -> {
        try {
            return MessageDigest.getInstance("SHA-256");
        } catch (NoSuchAlgorithmException e) {
            throw new IllegalStateException("SHA-256 is required by the Java platform", e);
        }
    });

    /** {@link AdvisoryResources#derivedIndexKey} with one digest per thread and the anchor's text given. */
    private static String derivedIndexKey(String patientId, String code, String anchor, String formula) {
        String readable = patientId + "|" + code + "|" + anchor + "|" + formula;
        byte[] hash = SHA256.get().digest(readable.getBytes(StandardCharsets.UTF_8));
        return HexFormat.of().formatHex(hash, 0, 16);
    }

    /**
     * The last anchor's texts, per thread: a patient's indices come in evaluation order, several at each anchor.
     */
    private static final ThreadLocal<Object[]> LAST_ANCHOR = ThreadLocal.withInitial(() -> new Object[3]);

    private static String anchorText(Instant anchor) {
        return (String) anchorTexts(anchor)[1];
    }

    private static String dateTimeText(Instant anchor) {
        return (String) anchorTexts(anchor)[2];
    }

    private static Object[] anchorTexts(Instant anchor) {
        Object[] last = LAST_ANCHOR.get();
        if (!anchor.equals(last[0])) {
            last[0] = anchor;
            last[1] = anchor.toString();
            last[2] = new DateTimeType(Date.from(anchor)).getValueAsString();
        }
        return last;
    }

    /** Text HAPI writes as it is: present, not blank, no surrounding whitespace, no control characters. */
    private static boolean plainText(String s) {
        if (s == null || s.isEmpty()) {
            return false;
        }
        if (Character.isWhitespace(s.charAt(0)) || Character.isWhitespace(s.charAt(s.length() - 1))) {
            return false;
        }
        for (int i = 0; i < s.length(); i++) {
            char c = s.charAt(i);
            if (c < 0x20 || c == 0x7f || c == '\u2028' || c == '\u2029' || Character.isSurrogate(c)) {
                return false;
            }
        }
        return true;
    }
}
