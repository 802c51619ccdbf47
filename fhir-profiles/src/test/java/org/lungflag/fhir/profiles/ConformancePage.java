package org.lungflag.fhir.profiles;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.stream.Collectors;
import org.hl7.fhir.r4.model.CapabilityStatement;
import org.hl7.fhir.r4.model.CodeSystem;
import org.hl7.fhir.r4.model.ConceptMap;
import org.hl7.fhir.r4.model.Device;
import org.hl7.fhir.r4.model.ElementDefinition;
import org.hl7.fhir.r4.model.Extension;
import org.hl7.fhir.r4.model.StructureDefinition;
import org.hl7.fhir.r4.model.Subscription;
import org.hl7.fhir.r4.model.Type;
import org.hl7.fhir.r4.model.ValueSet;

/**
 * Writes {@code CONFORMANCE.md}, the page hospital IT reviews: every profile with its element constraints and
 * invariants, every extension, every code with its definition, every ValueSet's content, the templates and the
 * server requirements, all generated from the built package. Run {@link #main} (or the command that {@link
 * ConformancePageTest} prints) after changing the package.
 */
final class ConformancePage {

    static final Path FILE = Path.of("CONFORMANCE.md");

    private final ConformancePackage pkg;
    private final StringBuilder out = new StringBuilder();

    private ConformancePage(ConformancePackage pkg) {
        this.pkg = pkg;
    }

    public static void main(String[] args) throws IOException {
        Files.writeString(FILE, render(ConformancePackage.load()), StandardCharsets.UTF_8);
        System.out.println("wrote " + FILE.toAbsolutePath());
    }

    static String render(ConformancePackage pkg) {
        return new ConformancePage(pkg).page();
    }

    private String page() {
        line("# Lungflag FHIR conformance package");
        line();
        line("Generated from the package by `ConformancePage` (test tree); do not edit by hand. Package `"
                + pkg.npm().name() + "` version `" + pkg.npm().version() + "`, FHIR "
                + pkg.npm().fhirVersion()
                + ", canonical base `" + LungflagFhir.CANONICAL_BASE + "`, on the classpath at `"
                + LungflagFhir.PACKAGE_RESOURCE + "`.");
        line();
        line("Lungflag writes advisory Flags, their Provenance and (optionally) derived-index Observations; it reads"
                + " blood gases, pulse oximetry, ventilator values and body measures. Every advisory carries its basis"
                + " and a caution: it is advisory only, computed from charted data that may be wrong or late, and"
                + " defers to the treating clinician and local protocols. Open review points are in `REVIEW.md`.");
        line();
        line("Contents: [Profiles](#profiles) · [Extensions](#extensions) · [Code systems](#code-systems) ·"
                + " [Value sets](#value-sets) · [Site input map](#site-input-map-template) ·"
                + " [Subscriptions](#subscription-templates) · [Device](#device) ·"
                + " [Server requirements](#server-requirements)");
        line();
        profiles();
        extensions();
        codeSystems();
        valueSets();
        conceptMap();
        subscriptions();
        device();
        capability();
        return out.toString();
    }

    private void profiles() {
        line("## Profiles");
        line();
        for (StructureDefinition sd : structureDefinitions(false)) {
            line("### " + sd.getTitle());
            line();
            line("`" + sd.getUrl() + "` — constrains " + sd.getType() + " (`" + sd.getBaseDefinition() + "`)");
            line();
            line(sd.getDescription());
            line();
            elementTable(sd);
        }
    }

    private void extensions() {
        line("## Extensions");
        line();
        for (StructureDefinition sd : structureDefinitions(true)) {
            line("### " + sd.getTitle());
            line();
            line("`" + sd.getUrl() + "` — on "
                    + sd.getContext().stream()
                            .map(c -> "`" + c.getExpression() + "`")
                            .collect(Collectors.joining(", ")));
            line();
            line(sd.getDescription());
            line();
            elementTable(sd);
        }
    }

    private void elementTable(StructureDefinition sd) {
        line("| element | card. | type / target | fixed, pattern, binding | meaning |");
        line("|---|---|---|---|---|");
        for (ElementDefinition e : sd.getDifferential().getElement()) {
            String card = (e.hasMin() ? String.valueOf(e.getMin()) : "")
                    + (e.hasMin() || e.hasMax() ? ".." : "")
                    + (e.hasMax() ? e.getMax() : "");
            String type = e.getType().stream()
                    .map(t -> t.getCode()
                            + (t.hasProfile()
                                    ? " "
                                            + t.getProfile().stream()
                                                    .map(p -> p.getValue())
                                                    .toList()
                                    : "")
                            + (t.hasTargetProfile()
                                    ? "("
                                            + t.getTargetProfile().stream()
                                                    .map(p -> tail(p.getValue()))
                                                    .collect(Collectors.joining(" | "))
                                            + ")"
                                    : ""))
                    .collect(Collectors.joining(", "));
            StringBuilder rule = new StringBuilder();
            if (e.hasFixed()) rule.append("fixed ").append(value(e.getFixed())).append(' ');
            if (e.hasPattern())
                rule.append("pattern ").append(value(e.getPattern())).append(' ');
            if (e.hasBinding()) {
                rule.append(e.getBinding().getStrength().toCode())
                        .append(" binding `")
                        .append(e.getBinding().getValueSet())
                        .append("` ");
            }
            if (e.hasSlicing()) {
                rule.append("sliced by ")
                        .append(e.getSlicing().getDiscriminator().stream()
                                .map(d -> d.getType().toCode() + ":" + d.getPath())
                                .collect(Collectors.joining(", ")));
            }
            line("| `" + e.getId() + "` | " + card + " | " + cell(type) + " | "
                    + cell(rule.toString().trim()) + " | " + cell(e.hasShort() ? e.getShort() : "") + " |");
        }
        line();
        List<ElementDefinition.ElementDefinitionConstraintComponent> invariants =
                sd.getDifferential().getElement().stream()
                        .flatMap(e -> e.getConstraint().stream())
                        .toList();
        if (!invariants.isEmpty()) {
            line("Invariants:");
            line();
            invariants.forEach(
                    c -> line("- **" + c.getKey() + "** (" + c.getSeverity().toCode() + "): " + c.getHuman() + " — `"
                            + c.getExpression().replace("`", "'") + "`"));
            line();
        }
    }

    private void codeSystems() {
        line("## Code systems");
        line();
        for (CodeSystem cs : pkg.all(CodeSystem.class)) {
            line("### " + cs.getTitle());
            line();
            line("`" + cs.getUrl() + "` — " + cs.getConcept().size() + " codes");
            line();
            line(cs.getDescription());
            line();
            line("| code | display | definition | properties |");
            line("|---|---|---|---|");
            for (CodeSystem.ConceptDefinitionComponent c : cs.getConcept()) {
                String props = c.getProperty().stream()
                        .map(p -> p.getCode() + ": " + value(p.getValue()))
                        .collect(Collectors.joining("<br>"));
                line("| `" + c.getCode() + "` | " + cell(c.getDisplay()) + " | " + cell(c.getDefinition()) + " | "
                        + cell(props) + " |");
            }
            line();
        }
    }

    private void valueSets() {
        line("## Value sets");
        line();
        for (ValueSet vs : pkg.all(ValueSet.class)) {
            line("### " + vs.getTitle());
            line();
            Extension kind = vs.getExtensionByUrl(LungflagFhir.Extensions.INPUT_KIND);
            line("`" + vs.getUrl() + "`"
                    + (kind != null ? " — input kind `" + kind.getValue().primitiveValue() + "`" : ""));
            line();
            line(vs.getDescription());
            line();
            for (ValueSet.ConceptSetComponent inc : vs.getCompose().getInclude()) {
                inc.getValueSet().forEach(v -> line("- all of `" + v.getValue() + "`"));
                if (inc.hasSystem() && inc.getConcept().isEmpty()) {
                    line("- all codes of `" + inc.getSystem() + "`");
                }
                for (ValueSet.ConceptReferenceComponent c : inc.getConcept()) {
                    String notes = c.getExtension().stream()
                            .map(x -> tail(x.getUrl()) + " " + x.getValue().primitiveValue())
                            .collect(Collectors.joining(", "));
                    line("- `" + inc.getSystem() + "|" + c.getCode() + "`"
                            + (c.hasDisplay() ? " " + c.getDisplay() : "")
                            + (notes.isEmpty() ? "" : " (" + notes + ")"));
                }
            }
            line();
        }
    }

    private void conceptMap() {
        ConceptMap map = (ConceptMap) pkg.resources().get(LungflagFhir.PackageFiles.CONCEPT_MAP_TEMPLATE);
        line("## Site input map (template)");
        line();
        line("`" + map.getUrl() + "`, file `package/" + LungflagFhir.PackageFiles.CONCEPT_MAP_TEMPLATE
                + "`, validated by the profile `" + LungflagFhir.Profiles.SITE_INPUT_MAP + "`.");
        line();
        line(map.getDescription());
        line();
        for (ConceptMap.ConceptMapGroupComponent g : map.getGroup()) {
            line("- group `" + g.getSource() + "` → `" + g.getTarget() + "`: "
                    + g.getElement().size() + " placeholder rows");
        }
        line();
    }

    private void subscriptions() {
        line("## Subscription templates");
        line();
        line("Each is created by the service with `channel.endpoint` set to its hook URL (placeholder `"
                + LungflagFhir.SubscriptionTemplate.ENDPOINT_PLACEHOLDER + "`) and the header placeholder `"
                + LungflagFhir.SubscriptionTemplate.AUTHORIZATION_HEADER_PLACEHOLDER
                + "` replaced by its bearer token.");
        line();
        for (Subscription s : pkg.all(Subscription.class)) {
            line("### " + s.getIdElement().getIdPart());
            line();
            line(s.getReason());
            line();
            line("channel " + s.getChannel().getType().toCode() + ", payload `"
                    + s.getChannel().getPayload() + "`; criteria:");
            line();
            line("```");
            line(s.getCriteria());
            line("```");
            line();
        }
    }

    private void device() {
        Device d = (Device) pkg.resources().get(LungflagFhir.PackageFiles.DEVICE);
        line("## Device");
        line();
        line(
                "`Device/" + d.getIdElement().getIdPart() + "`, identifier `"
                        + d.getIdentifierFirstRep().getSystem() + "|"
                        + d.getIdentifierFirstRep().getValue() + "`, version `"
                        + d.getVersionFirstRep().getValue()
                        + "`: the author of every Flag, the device of every derived Observation, the agent of every Provenance.");
        line();
        line(d.getNoteFirstRep().getText());
        line();
    }

    private void capability() {
        CapabilityStatement cap =
                (CapabilityStatement) pkg.resources().get(LungflagFhir.PackageFiles.SERVER_REQUIREMENTS);
        line("## Server requirements");
        line();
        line("`" + cap.getUrl() + "` (kind " + cap.getKind().toCode() + ")");
        line();
        line(cap.getDescription());
        line();
        CapabilityStatement.CapabilityStatementRestComponent rest = cap.getRestFirstRep();
        line(rest.getDocumentation());
        line();
        line("| resource | interactions | conditional | search parameters | notes |");
        line("|---|---|---|---|---|");
        for (CapabilityStatement.CapabilityStatementRestResourceComponent r : rest.getResource()) {
            String interactions = r.getInteraction().stream()
                    .map(i -> i.getCode().toCode() + " (" + expectation(i) + ")")
                    .collect(Collectors.joining(", "));
            String conditional =
                    (r.getConditionalCreate() ? "create " : "") + (r.getConditionalUpdate() ? "update" : "");
            String params = r.getSearchParam().stream()
                    .map(p -> "`" + p.getName() + "` (" + expectation(p) + ")")
                    .collect(Collectors.joining(", "));
            line("| " + r.getType() + " | " + interactions + " | " + conditional.trim() + " | " + params + " | "
                    + cell(r.getDocumentation() == null ? "" : r.getDocumentation()) + " |");
        }
        line();
        rest.getInteraction()
                .forEach(i -> line("System interaction **" + i.getCode().toCode() + "** (" + expectation(i) + "): "
                        + i.getDocumentation()));
    }

    private List<StructureDefinition> structureDefinitions(boolean extensions) {
        return pkg.all(StructureDefinition.class).stream()
                .filter(sd -> sd.getType().equals("Extension") == extensions)
                .toList();
    }

    private static String expectation(org.hl7.fhir.r4.model.Element e) {
        Extension x = e.getExtensionByUrl("http://hl7.org/fhir/StructureDefinition/capabilitystatement-expectation");
        return x == null ? "MAY" : x.getValue().primitiveValue();
    }

    private static String value(Type t) {
        if (t == null) return "";
        if (t.isPrimitive()) return "`" + t.primitiveValue() + "`";
        if (t instanceof org.hl7.fhir.r4.model.Coding c) return "`" + c.getSystem() + "|" + c.getCode() + "`";
        if (t instanceof org.hl7.fhir.r4.model.CodeableConcept cc) {
            return cc.getCoding().stream()
                    .map(c -> "`" + c.getSystem() + "|" + c.getCode() + "`")
                    .collect(Collectors.joining(", "));
        }
        return "`" + ConformancePackage.FHIR.newJsonParser().encodeToString(t) + "`";
    }

    private static String tail(String url) {
        return url.substring(url.lastIndexOf('/') + 1);
    }

    private static String cell(String s) {
        return s.replace("|", "\\|").replace("\n", " ");
    }

    private void line(String s) {
        out.append(s).append('\n');
    }

    private void line() {
        out.append('\n');
    }
}
