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

    /**
     * Orders as {@code toString().compareTo(other.toString())} does (same sign and value), without building either
     * string: timelines and explanations compare references often.
     */
    @Override
    public int compareTo(SourceRef other) {
        int start = 0;
        if (resourceType.equals(other.resourceType)) {
            start = resourceType.length() + 1; // the common "Type/" prefix
            if (id.equals(other.id)) {
                start += id.length();
                if (Objects.equals(version, other.version)) {
                    return 0;
                }
            }
        }
        int la = length();
        int lb = other.length();
        int n = Math.min(la, lb);
        for (int i = start; i < n; i++) {
            char a = charAt(i);
            char b = other.charAt(i);
            if (a != b) {
                return a - b;
            }
        }
        return la - lb;
    }

    private static final String HISTORY = "/_history/";

    /** The length of {@link #toString()}. */
    private int length() {
        int n = resourceType.length() + 1 + id.length();
        return version == null ? n : n + HISTORY.length() + version.length();
    }

    /** The character at {@code i} of {@link #toString()}. */
    private char charAt(int i) {
        if (i < resourceType.length()) {
            return resourceType.charAt(i);
        }
        i -= resourceType.length();
        if (i == 0) {
            return '/';
        }
        i -= 1;
        if (i < id.length()) {
            return id.charAt(i);
        }
        i -= id.length();
        if (i < HISTORY.length()) {
            return HISTORY.charAt(i);
        }
        return version.charAt(i - HISTORY.length());
    }
}
