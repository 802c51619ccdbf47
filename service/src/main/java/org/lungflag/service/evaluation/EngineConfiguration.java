package org.lungflag.service.evaluation;

import java.util.LinkedHashMap;
import java.util.Map;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.engine.RuleEngine;
import org.lungflag.rules.index.SiteParameters;
import org.lungflag.service.offline.OfflineEvaluation;
import org.lungflag.service.offline.Pipelines;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.context.annotation.Bean;
import org.springframework.context.annotation.Configuration;

/** The rule catalog (validated at start-up: a bad rule stops the service with file:line:col) and the engine. */
@Configuration(proxyBeanMethods = false)
class EngineConfiguration {

    private static final Logger log = LoggerFactory.getLogger(EngineConfiguration.class);

    @Bean
    RuleCatalog ruleCatalog(EvaluationProperties properties) {
        RuleCatalog catalog = Pipelines.catalog(properties.catalog());
        log.info("rule catalog {}: {} rules", catalog.origin(), catalog.rules().size());
        return catalog;
    }

    @Bean
    ParameterOverrides parameterOverrides(RuleCatalog catalog, EvaluationProperties properties) {
        Map<String, Object> values = new LinkedHashMap<>(properties.params());
        return ParameterOverrides.from(catalog, values);
    }

    @Bean
    SiteParameters siteParameters(EvaluationProperties properties) {
        return Pipelines.siteParameters(properties);
    }

    @Bean
    OfflineEvaluation offlineEvaluation(RuleEngine engine, RuleCatalog catalog, EvaluationProperties properties) {
        return new OfflineEvaluation(engine, catalog, properties.window());
    }

    @Bean
    RuleEngine ruleEngine(
            RuleCatalog catalog, ParameterOverrides overrides, SiteParameters site, EvaluationProperties properties) {
        return Pipelines.engine(catalog, overrides, site, properties);
    }
}
