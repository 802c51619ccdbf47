package org.lungflag.sandbox.demo;

import ca.uhn.fhir.context.FhirContext;
import java.io.IOException;
import java.io.PrintStream;
import java.io.UncheckedIOException;
import java.net.ServerSocket;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.security.SecureRandom;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.HexFormat;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.TreeMap;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import java.util.stream.Stream;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Flag;
import org.lungflag.sandbox.fhirserver.SandboxFhirServer;
import org.lungflag.sandbox.fhirserver.SandboxOptions;
import org.lungflag.sandbox.player.PlayOptions;
import org.lungflag.sandbox.player.PlayResult;
import org.lungflag.sandbox.player.ScenarioPlayer;
import org.lungflag.sandbox.scenario.DemoScenario;

/**
 * The one-command demo: the embedded FHIR server in this process, the Lungflag service jar as a child JVM on a fresh
 * H2 database, the scenario played into the server, and a report of the Flags the service wrote. Every run starts
 * clean: the FHIR server keeps its data in memory and the service's database and log live in a work folder that is
 * emptied first. {@link #stop()} (the shutdown hook on Ctrl-C) stops the child and the server.
 */
public final class DemoRun {

    /** The settings of one run. */
    public record Settings(
            Path serviceJar,
            Path workDirectory,
            int fhirPort,
            int servicePort,
            PlayOptions play,
            boolean exitAfterPlay,
            Duration startTimeout) {}

    private static final Pattern BACKLOG = Pattern.compile("\"(inboxBacklog|outboxBacklog)\"\\s*:\\s*(\\d+)");

    private final Settings settings;
    private final PrintStream out;
    private final HttpClient http = HttpClient.newBuilder()
            .connectTimeout(Duration.ofSeconds(5))
            .version(HttpClient.Version.HTTP_1_1)
            .build();
    private final AtomicBoolean stopped = new AtomicBoolean();
    private volatile SandboxFhirServer server;
    private volatile Process service;
    private ScenarioPlayer player;
    private final String adminPassword = HexFormat.of().formatHex(randomBytes()).substring(0, 20);

    public DemoRun(Settings settings, PrintStream out) {
        this.settings = settings;
        this.out = out;
    }

    /**
     * Runs the demo; with {@code exitAfterPlay} it returns when the service has written what the play caused,
     * otherwise it waits until the process is stopped.
     *
     * @throws DemoException when something cannot start (the message says what and where to look)
     */
    public void run() throws InterruptedException {
        Instant began = Instant.now();
        Path log = prepareWorkDirectory();
        out.println("Lungflag demo: an invented ICU (Saltmarsh General Hospital, 8 ventilated patients, 72 h of"
                + " clinical time). Invented data only.");
        out.println("Work folder (emptied at every start, so each run starts clean): " + settings.workDirectory());

        out.println("Starting the embedded FHIR server (HAPI FHIR JPA, in memory) ...");
        try {
            server = SandboxFhirServer.start(SandboxOptions.inMemory().withPort(settings.fhirPort()));
        } catch (RuntimeException e) {
            throw new DemoException("the FHIR server did not start: " + e.getMessage()
                    + (settings.fhirPort() != 0 ? " (choose another with --port)" : ""));
        }
        String fhirBase = server.baseUrl();
        player = new ScenarioPlayer(server.fhirContext(), DemoScenario.load());
        out.printf(
                Locale.ROOT,
                "  FHIR server ready in %.1f s at %s%n",
                server.startupTime().toMillis() / 1000.0,
                fhirBase);

        int port = settings.servicePort() == 0 ? freePort() : settings.servicePort();
        String serviceUrl = "http://127.0.0.1:" + port;
        out.println("Starting the Lungflag service (" + settings.serviceJar() + ") on H2; its log: " + log + " ...");
        service = startService(fhirBase, port, log);
        awaitReadiness(serviceUrl, log);
        out.printf(
                Locale.ROOT,
                "  service ready at %s (%.0f s since the demo started)%n",
                serviceUrl,
                Duration.between(began, Instant.now()).toMillis() / 1000.0);
        awaitSubscriptions(fhirBase, log);
        Instant ready = Instant.now();
        out.printf(
                Locale.ROOT,
                "  the service registered its Subscriptions on the FHIR server: ready to play %.0f s after the start%n",
                Duration.between(began, ready).toMillis() / 1000.0);

        printWhereToLook(fhirBase, serviceUrl);
        PlayOptions play = new PlayOptions(
                URI.create(fhirBase),
                settings.play().speed(),
                settings.play().hours(),
                settings.play().progressEvery());
        PlayResult result = player.play(play, out);
        out.println("Waiting for the service to finish evaluating and writing ...");
        awaitQuiet(serviceUrl, fhirBase, log, result.observationsPosted());
        printFlags(fhirBase);
        out.printf(
                Locale.ROOT,
                "Demo figures: start-up %s, play %s, %d resources posted, %d Flags on the server (%d"
                        + " active), %s in all.%n",
                ScenarioPlayer.human(Duration.between(began, ready)),
                ScenarioPlayer.human(result.wallTime()),
                result.resourcesPosted(),
                flagCounts(fhirBase)[0],
                flagCounts(fhirBase)[1],
                ScenarioPlayer.human(Duration.between(began, Instant.now())));
        if (settings.exitAfterPlay()) {
            return;
        }
        out.println("The FHIR server and the service keep running: look around, then press Ctrl-C to stop both.");
        out.flush();
        while (!stopped.get()) {
            if (!service.isAlive()) {
                throw new DemoException("the Lungflag service stopped by itself (exit " + service.exitValue()
                        + "); see its log: " + log);
            }
            Thread.sleep(1000);
        }
    }

    /** Stops the child JVM (gracefully, then by force) and the FHIR server; safe to call more than once. */
    public void stop() {
        if (!stopped.compareAndSet(false, true)) {
            return;
        }
        Process child = service;
        if (child != null && child.isAlive()) {
            out.println("Stopping the Lungflag service ...");
            child.destroy();
            try {
                if (!child.waitFor(30, TimeUnit.SECONDS)) {
                    child.destroyForcibly().waitFor(10, TimeUnit.SECONDS);
                }
            } catch (InterruptedException e) {
                child.destroyForcibly();
                Thread.currentThread().interrupt();
            }
        }
        SandboxFhirServer fhir = server;
        if (fhir != null) {
            out.println("Stopping the FHIR server ...");
            fhir.close();
        }
        out.println("Stopped.");
        out.flush();
    }

    private Path prepareWorkDirectory() {
        Path dir = settings.workDirectory();
        try {
            if (Files.exists(dir)) {
                try (Stream<Path> walk = Files.walk(dir)) {
                    for (Path p : walk.sorted(Comparator.reverseOrder()).toList()) {
                        Files.delete(p);
                    }
                }
            }
            Files.createDirectories(dir);
        } catch (IOException e) {
            throw new DemoException("cannot empty the work folder " + dir + ": " + e.getMessage());
        }
        return dir.resolve("service.log");
    }

    private Process startService(String fhirBase, int port, Path log) {
        String java = Path.of(System.getProperty("java.home"), "bin", "java").toString();
        Path db = settings.workDirectory().resolve("service-db").resolve("lungflag");
        List<String> command = new ArrayList<>(List.of(
                java,
                "-Xmx1g",
                "-XX:TieredStopAtLevel=1",
                "-jar",
                settings.serviceJar().toString(),
                "--server.port=" + port,
                "--lungflag.fhir.base-url=" + fhirBase,
                "--lungflag.intake.public-url=http://127.0.0.1:" + port,
                "--spring.datasource.url=jdbc:h2:file:" + db
                        + ";MODE=PostgreSQL;DATABASE_TO_LOWER=TRUE;DEFAULT_NULL_ORDERING=HIGH;AUTO_SERVER=FALSE",
                // the played data lie in the wall clock's past (72 h pass in minutes): moving the clinical clock to
                // "now" while the play runs would expire advisories that the next minutes of data continue
                "--lungflag.evaluation.advance-interval=" + advanceInterval().toSeconds() + "s"));
        ProcessBuilder builder = new ProcessBuilder(command)
                .directory(settings.workDirectory().toFile())
                .redirectErrorStream(true)
                .redirectOutput(log.toFile());
        // the token stays out of the command line (which other users of the machine can read)
        Map<String, String> env = builder.environment();
        env.put("LUNGFLAG_INTAKE_HOOK_TOKEN", HexFormat.of().formatHex(randomBytes()));
        // the demo's own admin account: the metrics and health details it reads need a login
        env.put("LUNGFLAG_SECURITY_ADMIN_PASSWORD", adminPassword);
        try {
            Process process = builder.start();
            return process;
        } catch (IOException e) {
            throw new DemoException("cannot start " + java + ": " + e.getMessage());
        }
    }

    /** Longer than the play, so the clinical clock moves on only after it. */
    Duration advanceInterval() {
        PlayOptions play = settings.play();
        double clinicalSeconds = play.hours() * 3600 + 3 * 3600;
        double wallSeconds = play.fullSpeed() ? 600 : clinicalSeconds / play.speed();
        return Duration.ofSeconds(Math.round(wallSeconds) + 600);
    }

    private void awaitReadiness(String serviceUrl, Path log) throws InterruptedException {
        Instant deadline = Instant.now().plus(settings.startTimeout());
        while (Instant.now().isBefore(deadline)) {
            if (!service.isAlive()) {
                throw new DemoException("the Lungflag service stopped during start-up (exit " + service.exitValue()
                        + "); the end of its log " + log + ":" + System.lineSeparator() + tail(log, 25));
            }
            if (get(serviceUrl + "/actuator/health/readiness") == 200) {
                return;
            }
            Thread.sleep(1000);
        }
        throw new DemoException("the Lungflag service was not ready within "
                + settings.startTimeout().toSeconds() + " s; see its log: " + log);
    }

    private void awaitSubscriptions(String fhirBase, Path log) throws InterruptedException {
        Instant deadline = Instant.now().plus(Duration.ofSeconds(120));
        while (Instant.now().isBefore(deadline)) {
            long all = count(fhirBase + "/Subscription?_summary=count");
            long active = count(fhirBase + "/Subscription?status=active&_summary=count");
            if (all > 0 && active == all) {
                return;
            }
            Thread.sleep(1000);
        }
        throw new DemoException("the service's Subscriptions did not become active on the FHIR server within 120 s;"
                + " see its log: " + log);
    }

    /**
     * Until the service has received at least every Observation posted, its inbox and outbox stay empty and the Flag
     * count stops changing (at most 10 min). The FHIR server delivers rest-hooks some time after each write, so empty
     * backlogs alone could mean "not delivered yet".
     */
    private void awaitQuiet(String serviceUrl, String fhirBase, Path log, int posted) throws InterruptedException {
        Instant deadline = Instant.now().plus(Duration.ofMinutes(10));
        int quietRounds = 0;
        long lastFlags = -2;
        while (Instant.now().isBefore(deadline) && quietRounds < 4) {
            Thread.sleep(2000);
            if (!service.isAlive()) {
                throw new DemoException("the Lungflag service stopped (exit " + service.exitValue() + "); see " + log);
            }
            long flags = flagCounts(fhirBase)[0];
            boolean done = received(serviceUrl) >= posted && backlogsEmpty(serviceUrl);
            quietRounds = done && flags == lastFlags ? quietRounds + 1 : 0;
            lastFlags = flags;
        }
    }

    /** Resources the service has recorded in its inbox (all channels, redeliveries included); -1 if unknown. */
    private long received(String serviceUrl) {
        try {
            HttpResponse<String> r = http.send(
                    HttpRequest.newBuilder(URI.create(serviceUrl + "/actuator/prometheus"))
                            .header("Authorization", basicAuth())
                            .timeout(Duration.ofSeconds(10))
                            .build(),
                    HttpResponse.BodyHandlers.ofString());
            double sum = 0;
            for (String line : r.body().split("\n")) {
                if (line.startsWith("lungflag_intake_received_total")) {
                    sum += Double.parseDouble(line.substring(line.lastIndexOf(' ') + 1));
                }
            }
            return Math.round(sum);
        } catch (IOException | RuntimeException e) {
            return -1;
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            return -1;
        }
    }

    private boolean backlogsEmpty(String serviceUrl) {
        try {
            HttpResponse<String> r = http.send(
                    HttpRequest.newBuilder(URI.create(serviceUrl + "/actuator/health"))
                            .header("Authorization", basicAuth())
                            .timeout(Duration.ofSeconds(10))
                            .build(),
                    HttpResponse.BodyHandlers.ofString());
            Matcher m = BACKLOG.matcher(r.body());
            int found = 0;
            while (m.find()) {
                found++;
                if (Long.parseLong(m.group(2)) != 0) {
                    return false;
                }
            }
            return found == 2;
        } catch (IOException e) {
            return false;
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            return false;
        }
    }

    private void printWhereToLook(String fhirBase, String serviceUrl) {
        out.println();
        out.println("Where to look (while it runs):");
        out.println("  FHIR server base URL   " + fhirBase);
        out.println("  all advisory Flags     GET " + fhirBase + "/Flag?_sort=-_lastUpdated");
        out.println("  one patient's Flags    GET " + fhirBase + "/Flag?subject=Patient/demo-01");
        out.println("  a Flag's Provenance    GET " + fhirBase + "/Provenance?target=Flag/<id>");
        out.println("  a patient's PaO2       GET " + fhirBase + "/Observation?subject=Patient/demo-01&code=2703-7");
        out.println("  Lungflag service       " + serviceUrl + " (health: " + serviceUrl + "/actuator/health,"
                + " metrics: " + serviceUrl + "/actuator/prometheus)");
        out.println("  dry run                POST " + serviceUrl + "/api/v1/evaluate (a Bundle of Patient,"
                + " Observation, Specimen)");
        int console = get(serviceUrl + "/console");
        if (console == 200 || console == 302 || console == 401) {
            out.println("  quality console        " + serviceUrl + "/console (user admin, password " + adminPassword
                    + ": a demo account of this run only)");
        } else {
            out.println("  quality console        not in this build yet (it will be at " + serviceUrl + "/console)");
        }
        out.println("  what you should see    README.md, \"What you should see\"");
        out.println();
        out.flush();
    }

    private void printFlags(String fhirBase) {
        try {
            FhirContext fhir = server.fhirContext();
            HttpResponse<String> r = http.send(
                    HttpRequest.newBuilder(URI.create(fhirBase + "/Flag?_count=200"))
                            .header("Accept", "application/fhir+json")
                            .header("Cache-Control", "no-cache")
                            .timeout(Duration.ofSeconds(30))
                            .build(),
                    HttpResponse.BodyHandlers.ofString());
            Bundle bundle = fhir.newJsonParser().parseResource(Bundle.class, r.body());
            Map<String, List<String>> byPatient = new TreeMap<>();
            for (Bundle.BundleEntryComponent e : bundle.getEntry()) {
                if (e.getResource() instanceof Flag f) {
                    byPatient
                            .computeIfAbsent(f.getSubject().getReference(), k -> new ArrayList<>())
                            .add(f.getCode().getCodingFirstRep().getCode() + " ("
                                    + f.getStatus().toCode() + ", " + "Flag/"
                                    + f.getIdElement().getIdPart() + ")");
                }
            }
            out.println("Advisory Flags by patient:");
            if (byPatient.isEmpty()) {
                out.println("  none");
            }
            byPatient.forEach((patient, flags) -> out.println("  " + patient + ": " + String.join(", ", flags)));
            out.flush();
        } catch (IOException | RuntimeException e) {
            out.println("Could not list the Flags: " + e.getMessage());
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
        }
    }

    private long[] flagCounts(String fhirBase) {
        return player.flagCounts(URI.create(fhirBase));
    }

    private long count(String url) {
        try {
            HttpResponse<String> r = http.send(
                    HttpRequest.newBuilder(URI.create(url))
                            .header("Accept", "application/fhir+json")
                            .header("Cache-Control", "no-cache")
                            .timeout(Duration.ofSeconds(30))
                            .build(),
                    HttpResponse.BodyHandlers.ofString());
            if (r.statusCode() != 200) {
                return -1;
            }
            return server.fhirContext()
                    .newJsonParser()
                    .parseResource(Bundle.class, r.body())
                    .getTotal();
        } catch (IOException | RuntimeException e) {
            return -1;
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            return -1;
        }
    }

    private int get(String url) {
        try {
            return http.send(
                            HttpRequest.newBuilder(URI.create(url))
                                    .timeout(Duration.ofSeconds(5))
                                    .build(),
                            HttpResponse.BodyHandlers.discarding())
                    .statusCode();
        } catch (IOException e) {
            return -1;
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            return -1;
        }
    }

    private static String tail(Path log, int lines) {
        try {
            List<String> all = Files.readAllLines(log, StandardCharsets.UTF_8);
            return String.join(System.lineSeparator(), all.subList(Math.max(0, all.size() - lines), all.size()));
        } catch (IOException e) {
            return "(cannot read it: " + e.getMessage() + ")";
        }
    }

    private String basicAuth() {
        return "Basic "
                + java.util.Base64.getEncoder()
                        .encodeToString(("admin:" + adminPassword).getBytes(StandardCharsets.UTF_8));
    }

    private static byte[] randomBytes() {
        byte[] bytes = new byte[32];
        new SecureRandom().nextBytes(bytes);
        return bytes;
    }

    static int freePort() {
        try (ServerSocket socket = new ServerSocket(0)) {
            return socket.getLocalPort();
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
    }
}
