package org.lungflag.service.replay;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Path;
import java.time.Duration;
import org.lungflag.service.evaluation.EvaluationProperties;
import org.lungflag.service.normalize.NormalizeProperties;
import org.springframework.boot.context.properties.bind.Binder;
import org.springframework.boot.context.properties.source.ConfigurationPropertySources;
import org.springframework.boot.env.YamlPropertySourceLoader;
import org.springframework.core.env.PropertySource;
import org.springframework.core.env.StandardEnvironment;
import org.springframework.core.io.ClassPathResource;

/**
 * The settings replay shares with the live service, read the way the service reads them (application.yaml, then
 * system properties and environment variables, with Spring's relaxed binding) but without starting a Spring
 * context: the evaluation settings ({@code lungflag.evaluation.*}: window, look-backs, display zone, barometric
 * pressure, parameter overrides, catalog folder), the site ConceptMap and the future-time skew. So a replay on the
 * service's own host and environment evaluates exactly as the service does.
 */
record ReplaySettings(EvaluationProperties evaluation, Path conceptMap, Duration futureSkew) {

    static ReplaySettings load() {
        StandardEnvironment env = new StandardEnvironment();
        try {
            for (PropertySource<?> source : new YamlPropertySourceLoader()
                    .load("application.yaml", new ClassPathResource("application.yaml"))) {
                env.getPropertySources().addLast(source);
            }
        } catch (IOException e) {
            throw new UncheckedIOException("cannot read application.yaml from the service jar", e);
        }
        Binder binder = new Binder(ConfigurationPropertySources.get(env));
        EvaluationProperties evaluation = binder.bindOrCreate("lungflag.evaluation", EvaluationProperties.class);
        NormalizeProperties normalize = binder.bindOrCreate("lungflag.normalize", NormalizeProperties.class);
        Duration skew =
                binder.bind("lungflag.intake.future-skew", Duration.class).orElse(Duration.ofMinutes(5));
        return new ReplaySettings(evaluation, normalize.conceptMap(), skew);
    }
}
