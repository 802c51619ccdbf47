package org.lungflag.rules.engine;

import java.time.Instant;
import java.util.List;
import org.lungflag.rules.measure.ClinicalFact;

/** Binary searches over a timeline's clinical-order fact lists. */
final class Points {

    private Points() {}

    /** Index of the first fact strictly after {@code at}. */
    static int indexAfter(List<ClinicalFact> list, Instant at) {
        int lo = 0;
        int hi = list.size();
        while (lo < hi) {
            int mid = (lo + hi) >>> 1;
            if (list.get(mid).time().isAfter(at)) {
                hi = mid;
            } else {
                lo = mid + 1;
            }
        }
        return lo;
    }

    /** Whether the list holds a fact at exactly {@code at}. */
    static boolean hasFactAt(List<ClinicalFact> list, Instant at) {
        int i = indexAfter(list, at) - 1;
        return i >= 0 && list.get(i).time().equals(at);
    }
}
