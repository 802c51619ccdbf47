package org.lungflag.service.deploy;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.lang.reflect.ParameterizedType;
import java.lang.reflect.RecordComponent;
import java.lang.reflect.Type;
import java.net.URL;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Collection;
import java.util.Enumeration;
import java.util.Map;
import java.util.Set;
import java.util.TreeSet;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import java.util.stream.Stream;
import org.springframework.boot.context.properties.ConfigurationProperties;
import org.springframework.boot.context.properties.source.ConfigurationProperty;
import org.springframework.boot.context.properties.source.ConfigurationPropertyName;
import org.springframework.boot.context.properties.source.ConfigurationPropertySource;
import org.springframework.boot.context.properties.source.ConfigurationPropertyState;
import org.springframework.boot.env.YamlPropertySourceLoader;
import org.springframework.context.annotation.ClassPathScanningCandidateComponentProvider;
import org.springframework.core.env.EnumerablePropertySource;
import org.springframework.core.env.PropertySource;
import org.springframework.core.env.SystemEnvironmentPropertySource;
import org.springframework.core.io.ClassPathResource;
import org.springframework.core.type.filter.AnnotationTypeFilter;

/**
 * Every configuration key the service reads, derived from its code rather than listed by hand: the
 * {@code @ConfigurationProperties} records under {@code org.lungflag.service} (components, nested records, maps),
 * the keys of {@code application.yaml}, the {@code ${...}} placeholders in the main sources and in
 * application.yaml, and, for {@code spring.*}, Spring Boot's own configuration metadata on the class path. Whether an
 * environment variable sets one of them is decided by Spring's own relaxed-binding mapper.
 */
final class ServiceConfigurationKeys {

    private static final Pattern PLACEHOLDER = Pattern.compile("\\$\\{([A-Za-z][A-Za-z0-9_.\\-\\[\\]]*)");

    /** Property names (canonical form) and whether each is a map or list whose entries are keys below it. */
    private final Map<String, Boolean> keys = new java.util.TreeMap<>();
    /** Placeholders written as environment variable names, e.g. {@code ${LUNGFLAG_DB_URL:...}}. */
    private final Set<String> literalVariables = new TreeSet<>();

    static ServiceConfigurationKeys derive(Path serviceModule) {
        ServiceConfigurationKeys k = new ServiceConfigurationKeys();
        k.addPropertiesRecords();
        k.addApplicationYaml();
        k.addPlaceholders(serviceModule.resolve("src/main/java"));
        k.addPlaceholders(serviceModule.resolve("src/main/resources"));
        k.addSpringBootMetadata();
        return k;
    }

    Set<String> keys() {
        return keys.keySet();
    }

    /** Whether setting environment variable {@code variable} configures a key the service reads. */
    boolean isRead(String variable) {
        if (literalVariables.contains(variable)) {
            return true;
        }
        ConfigurationPropertySource env = ConfigurationPropertySource.from(
                new SystemEnvironmentPropertySource("systemEnvironment", Map.of(variable, "value")));
        for (Map.Entry<String, Boolean> key : keys.entrySet()) {
            if (!ConfigurationPropertyName.isValid(key.getKey())) {
                continue;
            }
            ConfigurationPropertyName name = ConfigurationPropertyName.of(key.getKey());
            ConfigurationProperty property = env.getConfigurationProperty(name);
            if (property != null) {
                return true;
            }
            if (key.getValue() && env.containsDescendantOf(name) == ConfigurationPropertyState.PRESENT) {
                return true;
            }
        }
        return false;
    }

    private void add(String key, boolean container) {
        String canonical = key.replaceAll("\\[\\d+]$", "");
        keys.merge(canonical, container || !canonical.equals(key), Boolean::logicalOr);
    }

    private void addPropertiesRecords() {
        var scanner = new ClassPathScanningCandidateComponentProvider(false);
        scanner.addIncludeFilter(new AnnotationTypeFilter(ConfigurationProperties.class));
        for (var candidate : scanner.findCandidateComponents("org.lungflag.service")) {
            Class<?> type;
            try {
                type = Class.forName(candidate.getBeanClassName());
            } catch (ClassNotFoundException e) {
                throw new IllegalStateException(e);
            }
            ConfigurationProperties annotation = type.getAnnotation(ConfigurationProperties.class);
            String prefix = annotation.prefix().isEmpty() ? annotation.value() : annotation.prefix();
            addComponents(prefix, type);
        }
    }

    private void addComponents(String prefix, Class<?> type) {
        if (!type.isRecord()) {
            throw new IllegalStateException(type + " is not a record: describe its keys here");
        }
        for (RecordComponent c : type.getRecordComponents()) {
            String key = prefix + "." + kebab(c.getName());
            Class<?> t = c.getType();
            if (t.isRecord()) {
                addComponents(key, t);
            } else {
                add(key, Map.class.isAssignableFrom(t) || Collection.class.isAssignableFrom(t) || t.isArray());
            }
            if (Collection.class.isAssignableFrom(t) && c.getGenericType() instanceof ParameterizedType p) {
                Type element = p.getActualTypeArguments()[0];
                if (element instanceof Class<?> e && e.isRecord()) {
                    addComponents(key, e);
                }
            }
        }
    }

    private void addApplicationYaml() {
        try {
            for (PropertySource<?> source :
                    new YamlPropertySourceLoader().load("application", new ClassPathResource("application.yaml"))) {
                for (String name : ((EnumerablePropertySource<?>) source).getPropertyNames()) {
                    add(name, false);
                }
            }
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
    }

    private void addPlaceholders(Path folder) {
        try (Stream<Path> files = Files.walk(folder)) {
            for (Path file : files.filter(Files::isRegularFile).toList()) {
                Matcher m = PLACEHOLDER.matcher(Files.readString(file));
                while (m.find()) {
                    String name = m.group(1);
                    if (name.equals(name.toUpperCase())) {
                        literalVariables.add(name);
                    } else {
                        add(name, false);
                    }
                }
            }
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
    }

    private void addSpringBootMetadata() {
        ObjectMapper json = new ObjectMapper();
        try {
            Enumeration<URL> files =
                    getClass().getClassLoader().getResources("META-INF/spring-configuration-metadata.json");
            while (files.hasMoreElements()) {
                try (InputStream in = files.nextElement().openStream()) {
                    JsonNode root = json.readTree(in);
                    for (JsonNode p : root.path("properties")) {
                        String name = p.path("name").asText();
                        if (name.startsWith("spring.")) {
                            String type = p.path("type").asText("");
                            add(name, type.startsWith("java.util.Map") || type.startsWith("java.util.List"));
                        }
                    }
                }
            }
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
    }

    private static String kebab(String camel) {
        return camel.replaceAll("([a-z0-9])([A-Z])", "$1-$2").toLowerCase();
    }
}
