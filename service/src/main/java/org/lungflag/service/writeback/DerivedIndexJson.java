package org.lungflag.service.writeback;

import ca.uhn.fhir.context.FhirContext;
import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonGenerator;
import java.io.IOException;
import java.io.StringWriter;
import java.io.UncheckedIOException;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Date;
import java.util.List;
import java.util.regex.Pattern;
import org.hl7.fhir.r4.model.DateTimeType;
import org.hl7.fhir.r4.model.InstantType;
import org.hl7.fhir.r4.model.Quantity;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.rules.engine.UsedIndex;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.measure.SourceRef;

/**
 * The JSON of {@link AdvisoryResources#derivedIndex}'s Observation, written straight with Jackson instead of
 * building the HAPI resource and encoding it (replay writes one per index and anchor time, and building plus
 * encoding them was a quarter of its time). The output is the same text HAPI's JSON parser writes for that
 * Observation: the same elements in the order of the R4 Observation definition, empty ones left out, and every
 * primitive's text (decimal, dateTime, instant) taken from the HAPI datatype itself. Anything this writer does not
 * handle the same way for certain (an id that is not a plain FHIR id, text with surrounding or control whitespace,
 * a value that is not finite, a missing unit or display) goes through the HAPI builder and encoder instead.
 * DerivedIndexJsonTest compares both, parses the result back with HAPI and validates it against the profile.
 *
 * <p>Keep in step with {@link AdvisoryResources#derivedIndex}: a change there must be made here too (the test
 * fails otherwise).
 */
public final class DerivedIndexJson {

    /** FHIR R4 id datatype (http://hl7.org/fhir/R4/datatypes.html#id). */
    private static final Pattern FHIR_ID = Pattern.compile("[A-Za-z0-9\\-.]{1,64}");

    private static final Pattern RESOURCE_TYPE = Pattern.compile("[A-Z][A-Za-z]{0,63}");

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
        boolean plain = FHIR_ID.matcher(patientId).matches()
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
            plain = RESOURCE_TYPE.matcher(input.resourceType()).matches()
                    && FHIR_ID.matcher(input.id()).matches()
                    && (input.version() == null
                            || FHIR_ID.matcher(input.version()).matches());
            String ref = input.toString();
            if (!derivedFrom.contains(ref)) {
                derivedFrom.add(ref);
            }
        }
        if (!plain) {
            return fhir.newJsonParser()
                    .encodeResourceToString(AdvisoryResources.derivedIndex(patientId, index, anchor, issued));
        }
        StringWriter out = new StringWriter(1024);
        try (JsonGenerator g = JSON.createGenerator(out)) {
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
            g.writeStringField("value", AdvisoryResources.derivedIndexKey(patientId, index, anchor));
            g.writeEndObject();
            g.writeEndArray();
            g.writeStringField("status", "final");
            g.writeObjectFieldStart("code");
            g.writeArrayFieldStart("coding");
            g.writeStartObject();
            g.writeStringField("system", LungflagFhir.CodeSystems.INDEX);
            g.writeStringField("code", code.code());
            g.writeStringField("display", code.display());
            g.writeEndObject();
            if (code.loinc().isPresent()) {
                g.writeStartObject();
                g.writeStringField("system", LungflagFhir.CodeSystems.LOINC);
                g.writeStringField("code", code.loinc().get());
                g.writeEndObject();
            }
            g.writeEndArray();
            g.writeStringField("text", code.display());
            g.writeEndObject();
            g.writeObjectFieldStart("subject");
            g.writeStringField("reference", "Patient/" + patientId);
            g.writeEndObject();
            g.writeStringField("effectiveDateTime", new DateTimeType(Date.from(anchor)).getValueAsString());
            g.writeStringField("issued", issuedText);
            g.writeObjectFieldStart("valueQuantity");
            g.writeFieldName("value");
            g.writeNumber(
                    new Quantity().setValue(index.value()).getValueElement().getValueAsString());
            g.writeStringField("unit", displayUnit);
            g.writeStringField("system", LungflagFhir.CodeSystems.UCUM);
            g.writeStringField("code", unit);
            g.writeEndObject();
            if (!index.notes().isEmpty()) {
                g.writeArrayFieldStart("note");
                g.writeStartObject();
                g.writeStringField("text", notes);
                g.writeEndObject();
                g.writeEndArray();
            }
            g.writeObjectFieldStart("method");
            g.writeStringField("text", formula);
            g.writeEndObject();
            g.writeObjectFieldStart("device");
            g.writeStringField("reference", AdvisoryResources.DEVICE_REFERENCE);
            g.writeEndObject();
            if (!derivedFrom.isEmpty()) {
                g.writeArrayFieldStart("derivedFrom");
                for (String ref : derivedFrom) {
                    g.writeStartObject();
                    g.writeStringField("reference", ref);
                    g.writeEndObject();
                }
                g.writeEndArray();
            }
            g.writeEndObject();
        } catch (IOException e) {
            throw new UncheckedIOException("writing to a string cannot fail", e);
        }
        return out.toString();
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
            if (c < 0x20 || c == 0x7f || Character.isSurrogate(c)) {
                return false;
            }
        }
        return true;
    }
}
