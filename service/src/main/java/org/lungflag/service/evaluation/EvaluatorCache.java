package org.lungflag.service.evaluation;

import java.util.LinkedHashMap;
import java.util.Map;
import org.lungflag.rules.engine.PatientEvaluator;
import org.springframework.stereotype.Component;

/**
 * In-memory evaluators per patient, each tagged with the state sequence it matches. Only a cache: on a miss, a
 * stale sequence (another instance processed the patient) or a failed transaction the evaluator is rebuilt from
 * the audit store. Bounded (least recently used out) so memory stays flat with many patients.
 */
@Component
class EvaluatorCache {

    record Entry(PatientEvaluator evaluator, long seq) {}

    private final int capacity;
    private final Map<String, Entry> entries;

    EvaluatorCache(
            @org.springframework.beans.factory.annotation.Value("${lungflag.evaluation.cache-patients:5000}")
                    int capacity) {
        this.capacity = capacity;
        this.entries = new LinkedHashMap<>(256, 0.75f, true) {
            @Override
            protected boolean removeEldestEntry(Map.Entry<String, Entry> eldest) {
                return size() > EvaluatorCache.this.capacity;
            }
        };
    }

    synchronized Entry get(String patientId) {
        return entries.get(patientId);
    }

    synchronized void put(String patientId, PatientEvaluator evaluator, long seq) {
        entries.put(patientId, new Entry(evaluator, seq));
    }

    synchronized void evict(String patientId) {
        entries.remove(patientId);
    }

    synchronized int size() {
        return entries.size();
    }
}
