package org.lungflag.rules.catalog;

import java.util.List;
import java.util.Optional;
import java.util.Set;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SupportMode;

/**
 * One rule of the catalog, as loaded and checked from {@code <rule-id>/rule.yaml}. Immutable.
 *
 * <p>{@link #digest()} is the SHA-256 of the rule's canonical definition (see {@link CatalogLock}); every evaluation
 * carries id, version and digest.
 */
public final class RuleDefinition {

    private final String id;
    private final String version;
    private final String digest;
    private final String title;
    private final Population population;
    private final Set<SupportMode> support;
    private final Set<QuantityKind> triggers;
    private final List<RuleSource> sources;
    private final List<ParameterDefinition> parameters;
    private final List<Aggregate> aggregates;
    private final List<Tier> tiers;
    private final Temporal temporal;
    private final String caution;
    private final String file;
    private final RuleLogic logic;

    RuleDefinition(
            String id,
            String version,
            String digest,
            String title,
            Population population,
            Set<SupportMode> support,
            Set<QuantityKind> triggers,
            List<RuleSource> sources,
            List<ParameterDefinition> parameters,
            List<Aggregate> aggregates,
            List<Tier> tiers,
            Temporal temporal,
            String caution,
            String file,
            RuleLogic logic) {
        this.id = id;
        this.version = version;
        this.digest = digest;
        this.title = title;
        this.population = population;
        this.support = Set.copyOf(support);
        this.triggers = Set.copyOf(triggers);
        this.sources = List.copyOf(sources);
        this.parameters = List.copyOf(parameters);
        this.aggregates = List.copyOf(aggregates);
        this.tiers = List.copyOf(tiers);
        this.temporal = temporal;
        this.caution = caution;
        this.file = file;
        this.logic = logic;
    }

    public String id() {
        return id;
    }

    /** Semantic version, e.g. {@code 1.2.0}. */
    public String version() {
        return version;
    }

    /** {@code sha256:<hex>} of the canonical definition. */
    public String digest() {
        return digest;
    }

    public String title() {
        return title;
    }

    public Population population() {
        return population;
    }

    /** The support modes the rule applies to; empty means any support (or none). */
    public Set<SupportMode> support() {
        return support;
    }

    /** The fact kinds whose clinical times are this rule's evaluation points. */
    public Set<QuantityKind> triggers() {
        return triggers;
    }

    public List<RuleSource> sources() {
        return sources;
    }

    public Optional<RuleSource> source(String sourceId) {
        return sources.stream().filter(s -> s.id().equals(sourceId)).findFirst();
    }

    public List<ParameterDefinition> parameters() {
        return parameters;
    }

    public Optional<ParameterDefinition> parameter(String name) {
        return parameters.stream().filter(p -> p.name().equals(name)).findFirst();
    }

    public List<Aggregate> aggregates() {
        return aggregates;
    }

    /** Tiers, mildest first. */
    public List<Tier> tiers() {
        return tiers;
    }

    public Optional<Tier> tier(String code) {
        for (Tier t : tiers) {
            if (t.code().equals(code)) {
                return Optional.of(t);
            }
        }
        return Optional.empty();
    }

    public Temporal temporal() {
        return temporal;
    }

    /** The rule-specific caution, added to the general caution. */
    public String caution() {
        return caution;
    }

    /** The definition's path relative to the catalog root, e.g. {@code hypoxemia/rule.yaml}. */
    public String file() {
        return file;
    }

    /** The precompiled logic (for the engine). */
    public RuleLogic logic() {
        return logic;
    }

    @Override
    public String toString() {
        return id + "@" + version;
    }
}
