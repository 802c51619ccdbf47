package org.lungflag.rules.engine;

import dev.cel.runtime.CelEvaluationException;
import java.time.Duration;
import java.time.Instant;
import java.time.ZoneId;
import java.time.format.DateTimeFormatter;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import org.lungflag.rules.catalog.RuleLogic;
import org.lungflag.rules.catalog.RuleVariables;
import org.lungflag.rules.catalog.Template;
import org.lungflag.rules.catalog.Tier;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.index.IndexResult;
import org.lungflag.rules.index.IndexValue;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.ValueRole;

/** Renders advisory, basis and caution texts and collects what they used into an {@link Explanation}. */
final class Texts {

    /** Seconds of the earliest and latest instants a {@link java.time.LocalDateTime} can hold. */
    private static final long MIN_LOCAL_SECOND = -31557014167219200L;

    private static final long MAX_LOCAL_SECOND = 31556889864403199L;

    private final DateTimeFormatter timeFormat;
    private final java.time.zone.ZoneRules zoneRules;

    Texts(ZoneId zone) {
        this.timeFormat = DateTimeFormatter.ofPattern("HH:mm", Locale.ROOT).withZone(zone);
        this.zoneRules = zone.getRules();
    }

    /** The clock time {@code HH:mm} in the display zone: what {@code timeFormat} prints, without a formatter run. */
    String time(Instant t) {
        long local = t.getEpochSecond() + zoneRules.getOffset(t).getTotalSeconds();
        if (local < MIN_LOCAL_SECOND + 86_400 || local > MAX_LOCAL_SECOND - 86_400) {
            return timeFormat.format(t); // at the ends of the time-line, let the formatter decide (and refuse)
        }
        int secondOfDay = (int) Math.floorMod(local, 86_400L);
        int hour = secondOfDay / 3600;
        int minute = secondOfDay / 60 % 60;
        char[] c = {
            (char) ('0' + hour / 10),
            (char) ('0' + hour % 10),
            ':',
            (char) ('0' + minute / 10),
            (char) ('0' + minute % 10)
        };
        return new String(c);
    }

    static String support(SupportMode mode) {
        return switch (mode) {
            case INVASIVE_VENTILATION -> "invasive ventilation";
            case NON_INVASIVE_VENTILATION -> "non-invasive ventilation or CPAP";
            case HIGH_FLOW_NASAL_OXYGEN -> "high-flow nasal oxygen";
            case CONVENTIONAL_OXYGEN -> "conventional oxygen";
            case ROOM_AIR -> "room air";
        };
    }

    /** Collects the measurements and indices that rendered texts referred to. */
    private static final class Used {
        // made on first use: most renders of a placeholder-free or failing text add nothing
        Map<SourceRef, Measurement> measurements;
        Map<IndexCode, IndexValue> indices;

        void measurement(Measurement m) {
            if (measurements == null) {
                measurements = new LinkedHashMap<>();
            }
            measurements.put(m.source(), m);
        }

        void index(IndexValue iv) {
            if (indices == null) {
                indices = new LinkedHashMap<>();
            }
            indices.put(iv.code(), iv);
        }

        void addAll(Used other) {
            if (other.measurements != null) {
                for (Measurement m : other.measurements.values()) {
                    measurement(m);
                }
            }
            if (other.indices != null) {
                for (IndexValue iv : other.indices.values()) {
                    index(iv);
                }
            }
        }
    }

    /** Renders one template, or returns null when a placeholder is not available. */
    String render(Template template, Scope scope, Tier tier, Episode episode, Used used) {
        Used local = used == null ? null : new Used();
        String text = template.render(ph -> placeholder(ph, scope, tier, episode, local));
        if (text != null && used != null) {
            used.addAll(local);
        }
        return text;
    }

    private String placeholder(Template.Placeholder ph, Scope scope, Tier tier, Episode episode, Used used) {
        String name = ph.variable();
        switch (name) {
            case "tier" -> {
                if (tier == null) {
                    return null;
                }
                return ph.attribute().equals("code") ? tier.code() : tier.display();
            }
            case "anchor" -> {
                return time(scope.anchor().at);
            }
            case "episode.start" -> {
                return episode == null ? null : time(episode.start());
            }
            default -> {}
        }
        if (name.startsWith("params.")) {
            Object v = scope.value(name);
            if (v == null) {
                Duration d = scopeDuration(scope, name.substring(7));
                return d == null ? null : CompiledRule.formatDuration(d);
            }
            return format(v, ph.decimals());
        }
        RuleVariables.Variable sv = RuleVariables.standard().get(name);
        if (sv != null && sv.origin() == RuleVariables.Origin.MEASUREMENT_VALUE) {
            Measurement m = scope.anchor().measurement(sv.kind()).orElse(null);
            if (m == null) {
                return null;
            }
            if (used != null) {
                used.measurement(m);
            }
            return switch (ph.attribute()) {
                case "time" -> time(m.time());
                case "role" -> m.role() == ValueRole.SETTING ? "set" : "measured";
                default -> Template.formatNumber(sv.percent() ? m.value() * 100.0 : m.value(), ph.decimals());
            };
        }
        if (sv != null && sv.origin() == RuleVariables.Origin.INDEX_VALUE) {
            IndexResult r = scope.anchor().index(sv.index()).orElse(null);
            if (!(r instanceof IndexValue iv)) {
                return null;
            }
            if (used != null) {
                used.index(iv);
                for (Measurement m : iv.inputs()) {
                    if (m != null) {
                        used.measurement(m);
                    }
                }
            }
            return Template.formatNumber(iv.value(), ph.decimals());
        }
        Object v = scope.value(name);
        return v == null ? null : format(v, ph.decimals());
    }

    private static Duration scopeDuration(Scope scope, String param) {
        return scope.rule().durations.get(param);
    }

    private static String format(Object v, int decimals) {
        if (v instanceof Double d) {
            return Double.isNaN(d) ? null : Template.formatNumber(d, decimals);
        }
        if (v instanceof Boolean b) {
            return b ? "yes" : "no";
        }
        if (v instanceof Number n) {
            return Long.toString(n.longValue());
        }
        return String.valueOf(v);
    }

    private static final java.util.Comparator<UsedMeasurement> MEASUREMENT_ORDER =
            java.util.Comparator.comparing(UsedMeasurement::time).thenComparing(UsedMeasurement::source);

    /** The explanation of an evaluation at an anchor. */
    Explanation explain(CompiledRule rule, Scope scope, Tier tier, Episode episode, boolean active) {
        Used used = new Used();
        List<String> pieces = new ArrayList<>();
        List<RuleLogic.BasisFragment> fragments = rule.definition.logic().basis();
        for (int i = 0; i < fragments.size(); i++) {
            RuleLogic.BasisFragment f = fragments.get(i);
            String variable = rule.basisVariables[i];
            if (variable != null && scope.value(variable) instanceof Boolean b) {
                if (!b) {
                    continue; // a bare identifier holding a Boolean: what CEL would return
                }
            } else if (f.when() != null) {
                try {
                    if (!Boolean.TRUE.equals(f.when().eval(scope))) {
                        continue;
                    }
                } catch (CelEvaluationException e) {
                    throw new IllegalStateException("basis condition of " + rule.definition.id() + " failed", e);
                }
            }
            String s = render(f.text(), scope, tier, episode, used);
            if (s != null && !s.isEmpty()) {
                pieces.add(s);
            }
        }
        String basis = String.join(", ", pieces);
        String advisory = "";
        if (active) {
            String a = render(rule.definition.logic().advisory(), scope, tier, episode, used);
            advisory = a == null ? tier.display() : a;
        }
        boolean spo2 = false;
        List<UsedMeasurement> measurements = new ArrayList<>();
        if (used.measurements != null) {
            for (Measurement m : used.measurements.values()) {
                measurements.add(UsedMeasurement.of(m));
                spo2 |= m.kind() == QuantityKind.SPO2;
            }
        }
        measurements.sort(MEASUREMENT_ORDER);
        List<UsedIndex> indices = new ArrayList<>();
        if (used.indices != null) {
            for (IndexValue iv : used.indices.values()) {
                List<SourceRef> inputs = new ArrayList<>(iv.inputs().size());
                for (Measurement m : iv.inputs()) {
                    if (m != null) {
                        inputs.add(m.source());
                    }
                }
                indices.add(new UsedIndex(iv.code(), iv.value(), iv.code().unit(), iv.formula(), inputs, iv.notes()));
            }
        }
        return new Explanation(measurements, indices, rule.parameterTexts, advisory, basis, caution(rule, spo2));
    }

    /** The explanation of a resolution or expiry by time passing. */
    Explanation transition(CompiledRule rule, String basis) {
        return new Explanation(List.of(), List.of(), rule.parameterTexts, "", basis, caution(rule, false));
    }

    private static String caution(CompiledRule rule, boolean spo2) {
        return spo2 ? rule.cautionWithPulseOximetry : rule.caution;
    }
}
