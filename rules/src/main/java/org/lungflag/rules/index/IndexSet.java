package org.lungflag.rules.index;

import java.time.Instant;
import java.util.Arrays;
import java.util.Iterator;
import java.util.List;
import java.util.Objects;
import java.util.Optional;
import java.util.OptionalDouble;

/**
 * The result of every {@link IndexCode} at one anchor time: a value or a reason for each, iterated in IndexCode
 * order. Immutable.
 */
public final class IndexSet implements Iterable<IndexResult> {

    private static final IndexCode[] CODES = IndexCode.values();

    private final Instant anchor;
    private final IndexResult[] results;

    IndexSet(Instant anchor, IndexResult[] results) {
        this.anchor = Objects.requireNonNull(anchor, "anchor");
        if (results.length != CODES.length) {
            throw new IllegalArgumentException("an index set holds one result per index code");
        }
        for (int i = 0; i < results.length; i++) {
            if (results[i] == null || results[i].code() != CODES[i]) {
                throw new IllegalArgumentException("missing or misplaced result for " + CODES[i]);
            }
        }
        this.results = results;
    }

    /** The anchor time the indices were computed at. */
    public Instant anchor() {
        return anchor;
    }

    /** The result for one index: never {@code null}. */
    public IndexResult get(IndexCode code) {
        return results[code.ordinal()];
    }

    /** The value of an index, or empty when it was not evaluable. */
    public OptionalDouble value(IndexCode code) {
        return results[code.ordinal()] instanceof IndexValue v ? OptionalDouble.of(v.value()) : OptionalDouble.empty();
    }

    /** The computed value with its inputs and notes, or empty when not evaluable. */
    public Optional<IndexValue> indexValue(IndexCode code) {
        return results[code.ordinal()] instanceof IndexValue v ? Optional.of(v) : Optional.empty();
    }

    /** Why an index was not evaluable, or empty when it has a value. */
    public Optional<NotEvaluable> notEvaluable(IndexCode code) {
        return results[code.ordinal()] instanceof NotEvaluable n ? Optional.of(n) : Optional.empty();
    }

    public boolean isEvaluable(IndexCode code) {
        return results[code.ordinal()] instanceof IndexValue;
    }

    /** Every result in IndexCode order. */
    public List<IndexResult> asList() {
        return List.of(results);
    }

    public int size() {
        return results.length;
    }

    @Override
    public Iterator<IndexResult> iterator() {
        return asList().iterator();
    }

    @Override
    public String toString() {
        StringBuilder sb = new StringBuilder("IndexSet@").append(anchor).append('{');
        for (IndexResult r : results) {
            sb.append(r.code().code()).append('=');
            if (r instanceof IndexValue v) {
                sb.append(v.value());
            } else {
                sb.append(((NotEvaluable) r).reason().code());
            }
            sb.append(' ');
        }
        return sb.append('}').toString();
    }

    @Override
    public boolean equals(Object o) {
        return o instanceof IndexSet other && anchor.equals(other.anchor) && Arrays.equals(results, other.results);
    }

    @Override
    public int hashCode() {
        return 31 * anchor.hashCode() + Arrays.hashCode(results);
    }
}
