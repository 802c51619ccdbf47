package org.lungflag.rules.measure;

import java.util.Objects;

/**
 * A versioned reference to the record a value came from, e.g. {@code Observation/8812/_history/3}. This is the
 * only link from a derived value back to the chart; it never carries names or free text.
 */
public record SourceRef(String resourceType, String id, String version) implements Comparable<SourceRef> {

    public SourceRef {
        Objects.requireNonNull(resourceType, "resourceType");
        Objects.requireNonNull(id, "id");
        if (resourceType.isBlank() || id.isBlank()) {
            throw new IllegalArgumentException("a source reference needs a resource type and an id");
        }
    }

    public static SourceRef observation(String id, String version) {
        return new SourceRef("Observation", id, version);
    }

    /** Parses {@code Type/id} or {@code Type/id/_history/version}. */
    public static SourceRef parse(String reference) {
        String[] parts = reference.split("/");
        if (parts.length == 2) {
            return new SourceRef(parts[0], parts[1], null);
        }
        if (parts.length == 4 && "_history".equals(parts[2])) {
            return new SourceRef(parts[0], parts[1], parts[3]);
        }
        throw new IllegalArgumentException("not a FHIR reference of the form Type/id[/_history/version]: " + reference);
    }

    /** The unversioned reference {@code Type/id}. */
    public String unversioned() {
        return resourceType + "/" + id;
    }

    /** {@code Type/id/_history/version}, or {@code Type/id} when the version is unknown. */
    @Override
    public String toString() {
        return version == null ? unversioned() : unversioned() + "/_history/" + version;
    }

    @Override
    public int compareTo(SourceRef other) {
        return toString().compareTo(other.toString());
    }
}
