package org.lungflag.service.replay;

import java.util.ArrayList;
import java.util.List;
import java.util.PriorityQueue;

/**
 * The distribution of one derived index over the replay (one value per patient and anchor time). Count, minimum,
 * maximum and mean are exact; quantiles and the histogram come from a sample of at most {@link #CAP} values chosen
 * by a hash of patient and time (bottom-k sampling), so the sample is the same whatever order the data came in.
 */
final class IndexDistribution {

    static final int CAP = 20_000;

    private record Sampled(long key, double value) {}

    final String code;
    final String unit;
    long count;
    double min = Double.POSITIVE_INFINITY;
    double max = Double.NEGATIVE_INFINITY;
    double sum;
    private final PriorityQueue<Sampled> sample = new PriorityQueue<>((a, b) -> Long.compare(b.key, a.key));

    IndexDistribution(String code, String unit) {
        this.code = code;
        this.unit = unit;
    }

    /** The sampling key of one value: a hash of patient, anchor time and index, so any order gives one sample. */
    static long key(String patientId, long epochSecond, String code) {
        return Spill.hash(patientId + "@" + epochSecond + "#" + code);
    }

    /** Adds a value whose {@link #key} was worked out already (on a replay worker). */
    void add(long key, double value) {
        count++;
        min = Math.min(min, value);
        max = Math.max(max, value);
        sum += value;
        if (sample.size() < CAP) {
            sample.add(new Sampled(key, value));
        } else if (key < sample.peek().key) {
            sample.poll();
            sample.add(new Sampled(key, value));
        }
    }

    List<Double> sortedSample() {
        List<Double> values = new ArrayList<>(sample.size());
        for (Sampled s : sample) {
            values.add(s.value);
        }
        values.sort(null);
        return values;
    }

    static double quantile(List<Double> sorted, double q) {
        if (sorted.isEmpty()) {
            return Double.NaN;
        }
        double pos = q * (sorted.size() - 1);
        int lo = (int) Math.floor(pos);
        int hi = Math.min(sorted.size() - 1, lo + 1);
        return sorted.get(lo) + (pos - lo) * (sorted.get(hi) - sorted.get(lo));
    }

    /** {@code bins} equal-width counts between the sample's minimum and maximum (the last bin includes the max). */
    long[] histogram(List<Double> sorted, int bins) {
        long[] counts = new long[bins];
        if (sorted.isEmpty()) {
            return counts;
        }
        double lo = sorted.get(0);
        double hi = sorted.get(sorted.size() - 1);
        double width = hi > lo ? (hi - lo) / bins : 1;
        for (double v : sorted) {
            int b = (int) Math.min(bins - 1, Math.floor((v - lo) / width));
            counts[b]++;
        }
        return counts;
    }
}
