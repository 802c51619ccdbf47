package org.lungflag.service.reliability;

import static org.assertj.core.api.Assertions.assertThat;

import java.nio.file.Path;
import java.time.LocalDate;
import java.util.List;
import java.util.UUID;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.service.e2e.SandboxServer;
import org.lungflag.service.patient.PatientDirectory;
import org.springframework.context.ConfigurableApplicationContext;
import org.springframework.jdbc.core.simple.JdbcClient;

/**
 * The inbox asks for the demographics of a batch's patients at once (one FHIR search by {@code _id} per chunk) before
 * asking for each: against the embedded HAPI server, every patient it holds is cached by the one search, with the sex
 * and birth date the server has (FHIR R4 Patient.gender and Patient.birthDate, read as they were written); an id the
 * server does not know is left alone by the prefetch and then read on its own, giving unknown sex and age as before.
 * Patients invented.
 */
class DemographicsPrefetchTest {

    @TempDir
    Path dir;

    @Test
    void onePrefetchCachesEveryPatientTheServerHoldsAndLeavesTheUnknownOneToTheSingleRead() throws Exception {
        List<String> known =
                List.of(Harness.newPatient("prefetch"), Harness.newPatient("prefetch"), Harness.newPatient("prefetch"));
        String unknown = "prefetch-absent-" + UUID.randomUUID().toString().substring(0, 8);
        ConfigurableApplicationContext service = Harness.service(
                SandboxServer.freePort(),
                SandboxServer.server().baseUrl(),
                "--spring.datasource.url=jdbc:h2:file:" + dir.resolve("lungflag")
                        + ";MODE=PostgreSQL;DATABASE_TO_LOWER=TRUE;DEFAULT_NULL_ORDERING=HIGH;AUTO_SERVER=FALSE",
                "--lungflag.evaluation.processor-enabled=false");
        try {
            PatientDirectory directory = service.getBean(PatientDirectory.class);
            JdbcClient jdbc = service.getBean(JdbcClient.class);
            directory.prefetch(List.of(known.get(0), known.get(1), known.get(2), unknown));

            List<String> cached = jdbc.sql(
                            "SELECT patient_id FROM patient_state WHERE demographics_at IS NOT NULL ORDER BY patient_id")
                    .query(String.class)
                    .list();
            assertThat(cached).containsExactlyInAnyOrderElementsOf(known);
            for (String p : known) {
                // Harness.newPatient writes gender male, birthDate 1961-04-02
                assertThat(directory.facts(p)).isEqualTo(new PatientFacts(p, Sex.MALE, LocalDate.of(1961, 4, 2)));
            }
            assertThat(directory.facts(unknown)).isEqualTo(new PatientFacts(unknown, Sex.UNKNOWN, null));
        } finally {
            service.close();
        }
    }
}
