package org.lungflag.service.deploy;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.net.URI;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.yaml.snakeyaml.Yaml;

/** The repository's {@code docker-compose.yml} and {@code Dockerfile}, read as data for the deployment tests. */
public final class DeploymentFiles {

    public static final Path ROOT = findRoot();
    public static final Path SERVICE_MODULE = ROOT.resolve("service");

    private DeploymentFiles() {}

    private static Path findRoot() {
        Path p = Path.of("").toAbsolutePath();
        while (p != null && !Files.exists(p.resolve("docker-compose.yml"))) {
            p = p.getParent();
        }
        if (p == null) {
            throw new IllegalStateException(
                    "docker-compose.yml not found above " + Path.of("").toAbsolutePath());
        }
        return p;
    }

    public static String read(String file) {
        try {
            return Files.readString(ROOT.resolve(file));
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
    }

    @SuppressWarnings("unchecked")
    public static Map<String, Object> compose() {
        return (Map<String, Object>) new Yaml().load(read("docker-compose.yml"));
    }

    @SuppressWarnings("unchecked")
    public static Map<String, Map<String, Object>> services() {
        return (Map<String, Map<String, Object>>) compose().get("services");
    }

    public static Map<String, Object> service(String name) {
        Map<String, Object> s = services().get(name);
        if (s == null) {
            throw new AssertionError("docker-compose.yml has no service " + name);
        }
        return s;
    }

    /** The service built from the Dockerfile stage {@code target}. */
    public static String serviceBuiltFrom(String target) {
        return services().entrySet().stream()
                .filter(e -> e.getValue().get("build") instanceof Map<?, ?> b && target.equals(b.get("target")))
                .map(Map.Entry::getKey)
                .findFirst()
                .orElseThrow(() -> new AssertionError("no compose service builds the Dockerfile target " + target));
    }

    /** A service's environment as a map (compose accepts a map or a list of NAME=value). */
    @SuppressWarnings("unchecked")
    public static Map<String, String> environment(String service) {
        Object env = service(service).get("environment");
        Map<String, String> out = new LinkedHashMap<>();
        if (env instanceof Map<?, ?> m) {
            m.forEach((k, v) -> out.put(String.valueOf(k), v == null ? null : String.valueOf(v)));
        } else if (env instanceof List<?> l) {
            for (Object o : l) {
                String line = String.valueOf(o);
                int eq = line.indexOf('=');
                out.put(eq < 0 ? line : line.substring(0, eq), eq < 0 ? null : line.substring(eq + 1));
            }
        }
        return out;
    }

    /** {@code ${VAR:-default}} → default; {@code ${VAR}} → empty. What compose gives without an override. */
    public static String withDefaults(String value) {
        if (value == null) {
            return null;
        }
        return value.replaceAll("\\$\\{[A-Za-z0-9_]+(?::?-([^}]*))?}", "$1");
    }

    public static URI uri(String value) {
        return URI.create(withDefaults(value).replaceFirst("^jdbc:", ""));
    }

    /** Container ports a service publishes ({@code "8090:8080"} → 8080). */
    public static List<Integer> containerPorts(String service) {
        List<Integer> out = new ArrayList<>();
        Object ports = service(service).get("ports");
        if (ports instanceof List<?> l) {
            for (Object o : l) {
                String spec = String.valueOf(o);
                String container = spec.substring(spec.lastIndexOf(':') + 1).replaceAll("/.*", "");
                out.add(Integer.parseInt(container));
            }
        }
        return out;
    }

    @SuppressWarnings("unchecked")
    public static List<String> healthcheckTest(String service) {
        Object hc = service(service).get("healthcheck");
        if (!(hc instanceof Map<?, ?> m)) {
            return List.of();
        }
        return (List<String>) m.get("test");
    }

    /** The Dockerfile's {@code ARG NAME=default} values. */
    public static Map<String, String> dockerfileArgs() {
        Map<String, String> args = new LinkedHashMap<>();
        Matcher m =
                Pattern.compile("(?m)^ARG\\s+([A-Za-z_][A-Za-z0-9_]*)=(\\S+)").matcher(read("Dockerfile"));
        while (m.find()) {
            args.put(m.group(1), m.group(2));
        }
        return args;
    }

    /** Every {@code FROM image AS stage} of the Dockerfile, ARG defaults substituted, by stage name. */
    public static Map<String, String> dockerfileStages() {
        Map<String, String> args = dockerfileArgs();
        Map<String, String> stages = new LinkedHashMap<>();
        Matcher m = Pattern.compile("(?m)^FROM\\s+(\\S+)(?:\\s+AS\\s+(\\S+))?").matcher(read("Dockerfile"));
        while (m.find()) {
            String image = m.group(1);
            Matcher a = Pattern.compile("\\$\\{([A-Za-z0-9_]+)}").matcher(image);
            StringBuilder resolved = new StringBuilder();
            while (a.find()) {
                a.appendReplacement(resolved, Matcher.quoteReplacement(args.getOrDefault(a.group(1), "")));
            }
            a.appendTail(resolved);
            stages.put(m.group(2) == null ? "stage" + stages.size() : m.group(2), resolved.toString());
        }
        return stages;
    }

    /** The exec-form {@code HEALTHCHECK ... CMD [...]} of a Dockerfile stage, joined with spaces. */
    public static Optional<String> dockerfileHealthcheck(String stage) {
        String text = read("Dockerfile").replace("\\\n", " ");
        int from = text.indexOf(" AS " + stage + "\n");
        if (from < 0) {
            return Optional.empty();
        }
        int next = text.indexOf("\nFROM ", from);
        String body = next < 0 ? text.substring(from) : text.substring(from, next);
        Matcher m = Pattern.compile("HEALTHCHECK[^\\n]*CMD\\s*\\[([^\\]]*)]").matcher(body);
        if (!m.find()) {
            return Optional.empty();
        }
        return Optional.of(
                m.group(1).replaceAll("\"\\s*,\\s*\"", " ").replace("\"", "").trim());
    }

    /** A property of the parent pom, e.g. {@code hapi.version}. */
    public static String pomProperty(String name) {
        Matcher m = Pattern.compile("<" + Pattern.quote(name) + ">([^<]+)</").matcher(read("pom.xml"));
        if (!m.find()) {
            throw new AssertionError("pom.xml has no property " + name);
        }
        return m.group(1).trim();
    }
}
