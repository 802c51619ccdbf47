package org.lungflag.service.deploy;

import static org.assertj.core.api.Assertions.assertThat;
import static org.lungflag.service.deploy.DeploymentFiles.containerPorts;
import static org.lungflag.service.deploy.DeploymentFiles.dockerfileHealthcheck;
import static org.lungflag.service.deploy.DeploymentFiles.dockerfileStages;
import static org.lungflag.service.deploy.DeploymentFiles.environment;
import static org.lungflag.service.deploy.DeploymentFiles.healthcheckTest;
import static org.lungflag.service.deploy.DeploymentFiles.service;
import static org.lungflag.service.deploy.DeploymentFiles.serviceBuiltFrom;
import static org.lungflag.service.deploy.DeploymentFiles.services;
import static org.lungflag.service.deploy.DeploymentFiles.uri;
import static org.lungflag.service.deploy.DeploymentFiles.withDefaults;

import java.net.URI;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * What can be checked about the deployment without a Docker engine: the compose file parses, every image is pinned,
 * every Lungflag or Spring variable it sets is a key the service reads (derived from the code), and the ports,
 * URLs, credentials and health checks of the services agree with each other.
 */
class ComposeFileTest {

    static ServiceConfigurationKeys keys;
    static String lungflag;
    static String fhir;

    @BeforeAll
    static void read() {
        keys = ServiceConfigurationKeys.derive(DeploymentFiles.SERVICE_MODULE);
        lungflag = serviceBuiltFrom("service");
        fhir = serviceBuiltFrom("fhir");
    }

    @Test
    void theComposeFileParsesAndHasTheFhirServerLungflagTheirDatabasesAndTheDemoLoader() {
        assertThat(services()).containsKeys("fhir", "fhir-db", "lungflag", "lungflag-db", "demo");
        assertThat(lungflag).isEqualTo("lungflag");
        assertThat(fhir).isEqualTo("fhir");
    }

    @Test
    void everyImageIsPinnedToAnExplicitTagThatIsNotLatest() {
        List<String> images = new ArrayList<>();
        services().values().forEach(s -> {
            if (s.get("image") != null) {
                images.add(String.valueOf(s.get("image")));
            }
        });
        images.addAll(dockerfileStages().values().stream()
                .filter(i -> !dockerfileStages().containsKey(i)) // FROM another stage is not an image
                .toList());
        assertThat(images).isNotEmpty().allSatisfy(ComposeFileTest::assertPinned);
    }

    static void assertPinned(String image) {
        String lastPart = image.substring(image.lastIndexOf('/') + 1);
        assertThat(lastPart).as("image %s has a tag", image).contains(":");
        String tag = lastPart.substring(lastPart.indexOf(':') + 1).replaceAll("@.*", "");
        assertThat(tag)
                .as("tag of %s", image)
                .isNotBlank()
                .isNotEqualTo("latest")
                .doesNotContain("$");
    }

    @Test
    void thePinCheckRefusesLatestAndUntaggedImages() {
        assertPinned("postgres:16.6-alpine");
        org.assertj.core.api.Assertions.assertThatThrownBy(() -> assertPinned("postgres"))
                .isInstanceOf(AssertionError.class);
        org.assertj.core.api.Assertions.assertThatThrownBy(() -> assertPinned("hapiproject/hapi:latest"))
                .isInstanceOf(AssertionError.class);
        org.assertj.core.api.Assertions.assertThatThrownBy(() -> assertPinned("registry:5000/hapi"))
                .isInstanceOf(AssertionError.class);
    }

    @Test
    void theFhirServerImageIsTheHapiReleaseLungflagIsBuiltAgainstAndBaseImagesRunJava17() {
        String hapi = DeploymentFiles.pomProperty("hapi.version");
        String fhirBase = DeploymentFiles.dockerfileArgs().get("FHIR_IMAGE");
        assertThat(fhirBase).startsWith("hapiproject/hapi:v" + hapi);
        assertThat(String.valueOf(service(fhir).get("image"))).endsWith(fhirBase.substring(fhirBase.indexOf(':')));
        assertThat(DeploymentFiles.dockerfileArgs().get("JRE_IMAGE"))
                .contains(":17.")
                .contains("-jre");
        assertThat(DeploymentFiles.dockerfileArgs().get("JDK_IMAGE"))
                .contains(":17.")
                .contains("-jdk");
    }

    @Test
    void everyLungflagAndSpringVariableTheServiceIsGivenIsAKeyTheServiceReads() {
        Map<String, String> env = environment(lungflag);
        List<String> variables = env.keySet().stream()
                .filter(k -> k.startsWith("LUNGFLAG_") || k.startsWith("SPRING_"))
                .toList();
        assertThat(variables).isNotEmpty();
        assertThat(variables)
                .allSatisfy(v -> assertThat(keys.isRead(v))
                        .as("%s sets a key the service reads", v)
                        .isTrue());
        assertThat(env.keySet())
                .as("the service is only configured through LUNGFLAG_*, SPRING_* and PORT")
                .allMatch(k -> k.startsWith("LUNGFLAG_") || k.startsWith("SPRING_") || k.equals("PORT"));
    }

    @Test
    void theVariableCheckFollowsSpringRelaxedBindingAndRefusesUnknownNames() {
        assertThat(keys.isRead("LUNGFLAG_FHIR_BASEURL")).isTrue();
        assertThat(keys.isRead("LUNGFLAG_INTAKE_HOOKTOKEN")).isTrue();
        assertThat(keys.isRead("LUNGFLAG_EVALUATION_PARAMS_HYPOXEMIA_PEEPMIN")).isTrue(); // a map entry
        assertThat(keys.isRead("LUNGFLAG_INTAKE_CATCHUPTICK")).isTrue(); // an @Value key
        assertThat(keys.isRead("LUNGFLAG_DB_URL")).isTrue(); // a placeholder in application.yaml
        assertThat(keys.isRead("SPRING_DATASOURCE_HIKARI_MAXIMUMPOOLSIZE")).isTrue(); // Spring Boot's metadata
        assertThat(keys.isRead("LUNGFLAG_FHIR_BASE_ADDRESS")).isFalse();
        assertThat(keys.isRead("LUNGFLAG_WRITEBAK_MODE")).isFalse();
        assertThat(keys.isRead("SPRING_DATASOURCE_URI")).isFalse();
    }

    @Test
    void lungflagReachesTheFhirServerByItsServiceNameAndPortAtItsFhirPath() {
        URI base = uri(environment(lungflag).get("LUNGFLAG_FHIR_BASE_URL"));
        assertThat(base.getHost()).isEqualTo(fhir);
        assertThat(base.getPort()).isEqualTo(fhirPort());
        assertThat(base.getPath()).isEqualTo("/fhir");
    }

    @Test
    void theSubscriptionsPublicUrlResolvesToTheLungflagContainerOnItsServerPort() {
        URI publicUrl = uri(environment(lungflag).get("LUNGFLAG_INTAKE_PUBLIC_URL"));
        assertThat(publicUrl.getHost()).isEqualTo(lungflag);
        assertThat(publicUrl.getPort()).isEqualTo(lungflagPort());
        assertThat(containerPorts(lungflag)).contains(lungflagPort());
    }

    @Test
    void healthChecksProbeThePortsTheServicesListenOn() {
        String lungflagCheck = String.join(" ", healthcheckTest(lungflag));
        assertThat(lungflagCheck).contains("HttpProbe");
        assertThat(probedUri(lungflagCheck).getPort()).isEqualTo(lungflagPort());
        assertThat(probedUri(lungflagCheck).getPath()).isEqualTo("/actuator/health/readiness");
        assertThat(dockerfileHealthcheck("service"))
                .get()
                .satisfies(image -> assertThat(lungflagCheck).endsWith(image.substring(image.indexOf("java"))));
        String fhirCheck = dockerfileHealthcheck("fhir").orElseThrow();
        assertThat(probedUri(fhirCheck).getPort()).isEqualTo(fhirPort());
    }

    @Test
    void everyDependencyWaitsForAHealthyServiceThatHasAHealthCheck() {
        services().forEach((name, s) -> {
            if (s.get("depends_on") instanceof Map<?, ?> deps) {
                deps.forEach((dep, condition) -> {
                    assertThat(((Map<?, ?>) condition).get("condition"))
                            .as("%s waits for %s", name, dep)
                            .isEqualTo("service_healthy");
                    String depName = String.valueOf(dep);
                    boolean checked = !healthcheckTest(depName).isEmpty()
                            || (service(depName).get("build") instanceof Map<?, ?> b
                                    && dockerfileHealthcheck(String.valueOf(b.get("target")))
                                            .isPresent());
                    assertThat(checked).as("%s has a health check", depName).isTrue();
                });
            } else {
                assertThat(s.get("depends_on"))
                        .as("%s lists its dependencies with conditions", name)
                        .isNull();
            }
        });
    }

    @Test
    void eachDatabaseUrlNamesItsDatabaseContainerWithTheSameDatabaseAndUser() {
        Map<String, String> lf = environment(lungflag);
        URI lfDb = uri(lf.get("LUNGFLAG_DB_URL"));
        assertThat(lfDb.getScheme()).isEqualTo("postgresql");
        Map<String, String> lfPg = environment(lfDb.getHost());
        assertThat(lfDb.getPath()).isEqualTo("/" + lfPg.get("POSTGRES_DB"));
        assertThat(lf.get("LUNGFLAG_DB_USER")).isEqualTo(lfPg.get("POSTGRES_USER"));
        assertThat(withDefaults(lf.get("LUNGFLAG_DB_PASSWORD"))).isEqualTo(withDefaults(lfPg.get("POSTGRES_PASSWORD")));

        Map<String, String> hapi = environment(fhir);
        URI fhirDb = uri(hapi.get("spring.datasource.url"));
        Map<String, String> fhirPg = environment(fhirDb.getHost());
        assertThat(fhirDb.getPath()).isEqualTo("/" + fhirPg.get("POSTGRES_DB"));
        assertThat(hapi.get("spring.datasource.username")).isEqualTo(fhirPg.get("POSTGRES_USER"));
        assertThat(withDefaults(hapi.get("spring.datasource.password")))
                .isEqualTo(withDefaults(fhirPg.get("POSTGRES_PASSWORD")));
    }

    @Test
    void theFhirServerDeliversRestHooksQuicklyAndKeepsTheReferenceVersionsLungflagWrites() {
        Map<String, String> hapi = environment(fhir);
        assertThat(hapi).containsEntry("hapi.fhir.subscription.resthook_enabled", "true");
        assertThat(Integer.parseInt(hapi.get("hapi.fhir.subscription.polling_interval_ms")))
                .isLessThanOrEqualTo(1000);
        assertThat(hapi.get("hapi.fhir.auto_version_reference_at_paths").split(","))
                .contains("Provenance.target", "Provenance.entity.what");
    }

    @Test
    void theDemoLoaderIsAnOptionalOneShotThatRunsTheScenarioPlayer() {
        Map<String, Object> demo = service(serviceBuiltFrom("demo-loader"));
        assertThat(String.valueOf(demo.get("profiles"))).isEqualTo("[demo]");
        assertThat(demo.get("restart")).isEqualTo("no");
        assertThat(((List<?>) demo.get("command")).get(0)).isEqualTo("play");
        assertThat(DeploymentFiles.read("Dockerfile"))
                .contains("ENTRYPOINT [\"java\", \"-jar\", \"sandbox/target/lungflag-sandbox-exec.jar\"]");
    }

    @Test
    void everyLungflagKeyTheServiceReadsIsInTheReadmeSettingsTable() {
        String readme = DeploymentFiles.read("README.md");
        String table = readme.substring(readme.indexOf("### Settings"), readme.indexOf("### Scaling out"));
        assertThat(keys.keys().stream().filter(k -> k.startsWith("lungflag.")))
                .isNotEmpty()
                .allSatisfy(k -> assertThat(table.contains("`" + k + "`") || table.contains("`" + k + ".*`"))
                        .as("README.md \"Settings\" documents %s", k)
                        .isTrue());
    }

    private static int fhirPort() {
        // HAPI's image listens on 8080 unless server.port is set
        String override =
                environment(fhir).getOrDefault("server.port", environment(fhir).get("SERVER_PORT"));
        int port = override == null ? 8080 : Integer.parseInt(withDefaults(override));
        assertThat(containerPorts(fhir)).contains(port);
        return port;
    }

    private static int lungflagPort() {
        // application.yaml: server.port = ${PORT:8080}
        Map<String, String> env = environment(lungflag);
        String port = env.getOrDefault("SERVER_PORT", env.get("PORT"));
        return port == null ? 8080 : Integer.parseInt(withDefaults(port));
    }

    private static URI probedUri(String command) {
        for (String part : command.split("\\s+")) {
            if (part.startsWith("http://") || part.startsWith("https://")) {
                return URI.create(part);
            }
        }
        throw new AssertionError("no URL in health check " + command);
    }
}
