package org.lungflag.service.e2e;

import java.util.ArrayList;
import java.util.Comparator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Optional;
import org.lungflag.sandbox.scenario.ExpectedAdvisories.Expectation;

/**
 * Compares what the engine did with the demo scenario to the scenario's {@code expected-advisories.csv} (derived
 * from the design of each invented course, see {@code DemoPatients} in the sandbox). The same checks run on the
 * offline pipeline ({@link DemoScenarioOfflineTest}) and on the live service's audit (the end-to-end demo test),
 * so both must agree with the design. Every mismatch is collected so that one run shows them all.
 */
final class DemoScenarioChecks {

    /** One evaluation, hours from the scenario start. */
    record Evaluation(String patient, String rule, String outcome, String tier, String reason, double hour) {}

    /** A tier an episode reported from {@code hour} on. */
    record TierAt(String tier, double hour) {}

    /** One advisory episode in its final state. */
    record Episode(
            String patient,
            String rule,
            double startHour,
            String tier,
            boolean active,
            Double endHour,
            List<TierAt> history) {}

    /** A value accepted with an audited unit repair. */
    record Repair(String patient, String code, double hour) {}

    private DemoScenarioChecks() {}

    /** Every way the observed run differs from the expectations; empty when it matches. */
    static List<String> mismatches(
            List<Expectation> expected, List<Evaluation> evaluations, List<Episode> episodes, List<Repair> repairs) {
        List<String> problems = new ArrayList<>();
        Map<String, List<Episode>> byRule = new LinkedHashMap<>();
        for (Episode e : episodes) {
            byRule.computeIfAbsent(e.patient() + " " + e.rule(), k -> new ArrayList<>())
                    .add(e);
        }
        byRule.forEach((key, list) -> {
            if (list.size() > 1) {
                problems.add(key + ": " + list.size() + " episodes (the design has one per patient and rule): "
                        + list.stream().map(DemoScenarioChecks::describe).toList());
            }
        });
        for (Expectation x : expected) {
            String where = x.patient() + " " + x.rule() + " " + x.check() + " " + x.code();
            List<Episode> mine = byRule.getOrDefault(x.patient() + " " + x.rule(), List.of());
            if (x.isOnset()) {
                Optional<Double> first = mine.stream()
                        .flatMap(e -> e.history().stream())
                        .filter(t -> t.tier().equals(x.code()))
                        .map(TierAt::hour)
                        .min(Comparator.naturalOrder());
                if (first.isEmpty()) {
                    problems.add(where + ": never reported (episodes: "
                            + mine.stream().map(DemoScenarioChecks::describe).toList() + ")");
                } else if (!x.near(first.get())) {
                    problems.add(where + ": first at hour " + hour(first.get()) + ", expected about " + hour(x.hour())
                            + " +/- " + hour(x.toleranceHours()));
                }
            } else if (x.isFinal()) {
                Optional<Episode> last = mine.stream().max(Comparator.comparingDouble(Episode::startHour));
                if (last.isEmpty()) {
                    problems.add(where + ": no episode");
                    continue;
                }
                Episode e = last.get();
                boolean wantActive = "active".equals(x.status());
                if (!e.tier().equals(x.code()) || e.active() != wantActive) {
                    problems.add(where + ": ends " + describe(e) + ", expected " + x.code() + " " + x.status());
                } else if (!wantActive && (e.endHour() == null || !x.near(e.endHour()))) {
                    problems.add(where + ": ended at hour " + (e.endHour() == null ? "-" : hour(e.endHour()))
                            + ", expected about " + hour(x.hour()) + " +/- " + hour(x.toleranceHours()));
                }
            } else if (x.isNotEvaluable()) {
                boolean found = evaluations.stream()
                        .anyMatch(v -> v.patient().equals(x.patient())
                                && v.rule().equals(x.rule())
                                && "NOT_EVALUABLE".equals(v.outcome())
                                && x.code().equals(v.reason())
                                && x.near(v.hour()));
                if (!found) {
                    problems.add(where + ": no such evaluation near hour " + hour(x.hour()) + "; there: "
                            + evaluations.stream()
                                    .filter(v -> v.patient().equals(x.patient())
                                            && v.rule().equals(x.rule())
                                            && x.near(v.hour()))
                                    .map(v -> hour(v.hour()) + " " + v.outcome() + " " + v.reason())
                                    .toList());
                }
            } else if (x.isRepair()) {
                boolean found = repairs.stream()
                        .anyMatch(
                                r -> r.patient().equals(x.patient()) && r.code().equals(x.code()) && x.near(r.hour()));
                if (!found) {
                    problems.add(where + ": no such repair near hour " + hour(x.hour()) + "; repairs: " + repairs);
                }
            } else if (x.isNotEvaluated()) {
                long count = evaluations.stream()
                        .filter(v -> v.patient().equals(x.patient()) && v.rule().equals(x.rule()))
                        .count();
                if (count > 0) {
                    problems.add(where + ": evaluated " + count + " times");
                }
            } else {
                problems.add(where + ": unknown check");
            }
        }
        for (Episode e : episodes) {
            for (TierAt t : e.history()) {
                boolean listed = expected.stream()
                        .anyMatch(x -> x.isOnset()
                                && x.patient().equals(e.patient())
                                && x.rule().equals(e.rule())
                                && x.code().equals(t.tier()));
                if (!listed) {
                    problems.add(e.patient() + " " + e.rule() + ": unexpected tier " + t.tier() + " at hour "
                            + hour(t.hour()));
                }
            }
        }
        return problems;
    }

    static String describe(Episode e) {
        return e.tier() + (e.active() ? " active" : " ended at " + (e.endHour() == null ? "-" : hour(e.endHour())))
                + " from " + hour(e.startHour()) + " "
                + e.history().stream().map(t -> t.tier() + "@" + hour(t.hour())).toList();
    }

    static String hour(double h) {
        return String.format(Locale.ROOT, "%.1f", h);
    }
}
