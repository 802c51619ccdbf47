package org.lungflag.service.e2e;

import java.time.Duration;
import java.util.Map;
import org.lungflag.service.deploy.DeploymentFiles;
import org.testcontainers.containers.GenericContainer;
import org.testcontainers.containers.Network;
import org.testcontainers.containers.PostgreSQLContainer;
import org.testcontainers.containers.wait.strategy.Wait;
import org.testcontainers.utility.DockerImageName;

/**
 * The containers of {@code docker-compose.yml}, configured from that file (images, environment) so the container
 * tests check what hospital IT runs, not a copy of it.
 */
final class ContainerImages {

    private ContainerImages() {}

    /** The FHIR server's database, as the compose file's {@code fhir-db}, reachable as {@code fhir-db}. */
    static PostgreSQLContainer<?> fhirDatabase(Network network) {
        Map<String, String> env = DeploymentFiles.environment("fhir-db");
        return new PostgreSQLContainer<>(postgresImage("fhir-db"))
                .withNetwork(network)
                .withNetworkAliases("fhir-db")
                .withDatabaseName(env.get("POSTGRES_DB"))
                .withUsername(env.get("POSTGRES_USER"))
                .withPassword(DeploymentFiles.withDefaults(env.get("POSTGRES_PASSWORD")));
    }

    /** Lungflag's database, as the compose file's {@code lungflag-db}. */
    static PostgreSQLContainer<?> lungflagDatabase() {
        Map<String, String> env = DeploymentFiles.environment("lungflag-db");
        return new PostgreSQLContainer<>(postgresImage("lungflag-db"))
                .withDatabaseName(env.get("POSTGRES_DB"))
                .withUsername(env.get("POSTGRES_USER"))
                .withPassword(DeploymentFiles.withDefaults(env.get("POSTGRES_PASSWORD")));
    }

    /**
     * The HAPI FHIR image of the Dockerfile's {@code fhir} stage with the compose file's environment, on port 8080.
     * Started without the probe layer (the health check is Docker's business; here the wait strategy asks).
     */
    static GenericContainer<?> fhirServer(Network network) {
        GenericContainer<?> fhir = new GenericContainer<>(
                        DockerImageName.parse(DeploymentFiles.dockerfileArgs().get("FHIR_IMAGE")))
                .withNetwork(network)
                .withExposedPorts(8080)
                .withAccessToHost(true)
                .waitingFor(Wait.forHttp("/fhir/metadata")
                        .forPort(8080)
                        .forStatusCode(200)
                        .withStartupTimeout(Duration.ofMinutes(6)));
        DeploymentFiles.environment("fhir").forEach((k, v) -> fhir.withEnv(k, DeploymentFiles.withDefaults(v)));
        return fhir;
    }

    static String fhirBaseUrl(GenericContainer<?> fhir) {
        return "http://" + fhir.getHost() + ":" + fhir.getMappedPort(8080) + "/fhir";
    }

    private static DockerImageName postgresImage(String service) {
        return DockerImageName.parse(
                        String.valueOf(DeploymentFiles.service(service).get("image")))
                .asCompatibleSubstituteFor("postgres");
    }
}
