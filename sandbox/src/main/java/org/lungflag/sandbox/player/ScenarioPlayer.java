package org.lungflag.sandbox.player;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.parser.IParser;
import ca.uhn.fhir.util.FhirTerser;
import java.io.IOException;
import java.io.PrintStream;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.time.ZoneOffset;
import java.time.format.DateTimeFormatter;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.Date;
import java.util.List;
import java.util.Locale;
import org.hl7.fhir.r4.model.BaseDateTimeType;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.DateTimeType;
import org.hl7.fhir.r4.model.InstantType;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Resource;
import org.lungflag.sandbox.scenario.DemoScenario;

/**
 * Posts the demo scenario to a FHIR server in accelerated clinical time, with every time shifted so that the
 * played part ends "now" (when the play ends): Patients, Encounters and Specimens first, then the Observations in
 * clinical order, each charting moment (one patient, one time) as one transaction Bundle of {@code PUT}s by the
 * scenario's ids, so playing again onto the same server updates rather than duplicates.
 *
 * <p>It prints a progress line every {@link PlayOptions#progressEvery()} of clinical time: the clinical time, the
 * resources posted and the advisories raised so far (the number of Flags on the server, whoever wrote them).
 */
public final class ScenarioPlayer {

    private static final String FHIR_JSON = "application/fhir+json";
    private static final DateTimeFormatter CLOCK =
            DateTimeFormatter.ofPattern("yyyy-MM-dd HH:mm", Locale.ROOT).withZone(ZoneOffset.UTC);
    private static final int ATTEMPTS = 5;

    private final FhirContext fhir;
    private final DemoScenario scenario;
    private final HttpClient http;
    private final Clock clock;

    public ScenarioPlayer(FhirContext fhir, DemoScenario scenario) {
        this(fhir, scenario, Clock.systemUTC());
    }

    ScenarioPlayer(FhirContext fhir, DemoScenario scenario, Clock clock) {
        this.fhir = fhir;
        this.scenario = scenario;
        this.clock = clock;
        this.http = HttpClient.newBuilder()
                .connectTimeout(Duration.ofSeconds(10))
                .version(HttpClient.Version.HTTP_1_1)
                .build();
    }

    /**
     * Plays the scenario and returns when the last resource is posted.
     *
     * @throws PlayException when the server refuses a resource or cannot be reached after a few attempts (the
     *     message names the resource and the server's answer)
     * @throws InterruptedException when the thread is interrupted (Ctrl-C in the demo); what was posted stays
     */
    public PlayResult play(PlayOptions options, PrintStream out) throws InterruptedException {
        IParser parser = fhir.newJsonParser();
        Instant scenarioEnd = scenario.nominalStart().plus(Duration.ofSeconds(Math.round(options.hours() * 3600)));
        List<Resource> setup = new ArrayList<>();
        for (String file : List.of("Patient.ndjson", "Encounter.ndjson", "Specimen.ndjson")) {
            for (String line : scenario.lines(file)) {
                setup.add((Resource) parser.parseResource(line));
            }
        }
        List<Observation> observations = new ArrayList<>();
        for (String line : scenario.lines("Observation.ndjson")) {
            Observation o = parser.parseResource(Observation.class, line);
            if (!o.getEffectiveDateTimeType().getValue().toInstant().isAfter(scenarioEnd)) {
                observations.add(o);
            }
        }
        Instant first = observations.isEmpty()
                ? scenario.nominalStart()
                : observations.get(0).getEffectiveDateTimeType().getValue().toInstant();
        Duration clinicalSpan = Duration.between(first, scenarioEnd);
        Duration wallSpan = options.fullSpeed()
                ? Duration.ZERO
                : Duration.ofMillis(Math.round(clinicalSpan.toMillis() / options.speed()));
        Instant wallStart = clock.instant();
        // the played part ends "now" when the play ends; whole minutes keep the charted times tidy
        Instant anchor = wallStart.plus(wallSpan).truncatedTo(ChronoUnit.MINUTES);
        Duration shift = Duration.between(scenarioEnd, anchor);
        FhirTerser terser = fhir.newTerser();

        out.printf(
                Locale.ROOT,
                "Playing the invented demo scenario to %s: %.0f h of clinical time (%s to %s UTC), %s.%n",
                options.fhirBaseUrl(),
                options.hours(),
                CLOCK.format(scenario.nominalStart().plus(shift)),
                CLOCK.format(anchor),
                options.fullSpeed()
                        ? "at full speed"
                        : String.format(Locale.ROOT, "in about %s of wall-clock time", human(wallSpan)));
        out.flush();

        setup.forEach(r -> shiftTimes(terser, r, shift));
        int posted = 0;
        post(options.fhirBaseUrl(), transaction(setup), "Patients, Encounters and Specimens");
        posted += setup.size();

        int observationsPosted = 0;
        Instant nextProgress = scenario.nominalStart();
        int i = 0;
        while (i < observations.size()) {
            Observation head = observations.get(i);
            Instant at = head.getEffectiveDateTimeType().getValue().toInstant();
            String patient = head.getSubject().getReference();
            List<Resource> moment = new ArrayList<>();
            while (i < observations.size()
                    && observations
                            .get(i)
                            .getEffectiveDateTimeType()
                            .getValue()
                            .toInstant()
                            .equals(at)
                    && observations.get(i).getSubject().getReference().equals(patient)) {
                moment.add(observations.get(i++));
            }
            while (!at.isBefore(nextProgress)) {
                progress(out, options, nextProgress, shift, observationsPosted);
                nextProgress = nextProgress.plus(options.progressEvery());
            }
            if (!options.fullSpeed()) {
                long offsetMillis = Math.round(Duration.between(first, at).toMillis() / options.speed());
                Instant due = wallStart.plusMillis(offsetMillis);
                long wait = Duration.between(clock.instant(), due).toMillis();
                if (wait > 0) {
                    Thread.sleep(wait);
                }
            }
            moment.forEach(r -> shiftTimes(terser, r, shift));
            post(
                    options.fhirBaseUrl(),
                    transaction(moment),
                    moment.get(0).fhirType() + "/"
                            + moment.get(0).getIdElement().getIdPart());
            posted += moment.size();
            observationsPosted += moment.size();
            if (Thread.interrupted()) {
                throw new InterruptedException("stopped after " + observationsPosted + " Observations");
            }
        }
        long[] flags = flagCounts(options.fhirBaseUrl());
        Duration wall = Duration.between(wallStart, clock.instant());
        out.printf(
                Locale.ROOT,
                "Played %.0f h: %d resources posted (%d Observations) in %s; advisories raised so far: %d Flags (%d"
                        + " active).%n",
                options.hours(),
                posted,
                observationsPosted,
                human(wall),
                flags[0],
                flags[1]);
        out.flush();
        return new PlayResult(
                shift,
                scenario.nominalStart().plus(shift),
                anchor,
                posted,
                observationsPosted,
                flags[0],
                flags[1],
                wall);
    }

    private void progress(PrintStream out, PlayOptions options, Instant scenarioTime, Duration shift, int posted) {
        long[] flags = flagCounts(options.fhirBaseUrl());
        double hour = Duration.between(scenario.nominalStart(), scenarioTime).toMinutes() / 60.0;
        out.printf(
                Locale.ROOT,
                "  clinical hour %4.0f (%s UTC): %5d Observations posted, advisories raised: %d Flags (%d active)%n",
                hour,
                CLOCK.format(scenarioTime.plus(shift)),
                posted,
                flags[0],
                flags[1]);
        out.flush();
    }

    /** Moves every dateTime and instant of a resource (not birth dates, which are plain dates). */
    private static void shiftTimes(FhirTerser terser, Resource resource, Duration shift) {
        for (BaseDateTimeType t : terser.getAllPopulatedChildElementsOfType(resource, BaseDateTimeType.class)) {
            if ((t instanceof DateTimeType || t instanceof InstantType) && t.getValue() != null) {
                t.setValue(Date.from(t.getValue().toInstant().plus(shift)));
            }
        }
    }

    private Bundle transaction(List<Resource> resources) {
        Bundle bundle = new Bundle().setType(Bundle.BundleType.TRANSACTION);
        for (Resource r : resources) {
            String ref = r.fhirType() + "/" + r.getIdElement().getIdPart();
            bundle.addEntry()
                    .setFullUrl(ref)
                    .setResource(r)
                    .getRequest()
                    .setMethod(Bundle.HTTPVerb.PUT)
                    .setUrl(ref);
        }
        return bundle;
    }

    private void post(URI base, Bundle bundle, String what) throws InterruptedException {
        String body = fhir.newJsonParser().encodeResourceToString(bundle);
        HttpRequest request = HttpRequest.newBuilder(uri(base, ""))
                .timeout(Duration.ofSeconds(60))
                .header("Content-Type", FHIR_JSON)
                .header("Accept", FHIR_JSON)
                .POST(HttpRequest.BodyPublishers.ofString(body, StandardCharsets.UTF_8))
                .build();
        String problem = null;
        for (int attempt = 1; attempt <= ATTEMPTS; attempt++) {
            try {
                HttpResponse<String> response = http.send(request, HttpResponse.BodyHandlers.ofString());
                if (response.statusCode() / 100 == 2) {
                    return;
                }
                problem = "HTTP " + response.statusCode() + ": " + firstLine(response.body());
                if (response.statusCode() / 100 == 4) {
                    break; // the server refuses it: trying again will not help
                }
            } catch (IOException e) {
                problem = e.getClass().getSimpleName() + (e.getMessage() == null ? "" : ": " + e.getMessage());
            }
            Thread.sleep(500L * attempt);
        }
        throw new PlayException("the FHIR server at " + base + " did not accept " + what + " (" + problem + ")");
    }

    /** Flags on the server, all and active; -1 when the server does not answer. */
    public long[] flagCounts(URI base) {
        return new long[] {count(base, "Flag?_summary=count"), count(base, "Flag?status=active&_summary=count")};
    }

    private long count(URI base, String query) {
        try {
            HttpResponse<String> response = http.send(
                    HttpRequest.newBuilder(uri(base, query))
                            .timeout(Duration.ofSeconds(30))
                            .header("Accept", FHIR_JSON)
                            .header("Cache-Control", "no-cache")
                            .GET()
                            .build(),
                    HttpResponse.BodyHandlers.ofString());
            if (response.statusCode() != 200) {
                return -1;
            }
            return fhir.newJsonParser()
                    .parseResource(Bundle.class, response.body())
                    .getTotal();
        } catch (IOException | RuntimeException e) {
            return -1;
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            return -1;
        }
    }

    private static URI uri(URI base, String path) {
        // PlayOptions keeps the base without a trailing slash
        return URI.create(base + (path.isEmpty() ? "" : "/" + path));
    }

    static String human(Duration d) {
        long seconds = Math.max(0, Math.round(d.toMillis() / 1000.0));
        return seconds < 120 ? seconds + " s" : String.format(Locale.ROOT, "%d min %02d s", seconds / 60, seconds % 60);
    }

    private static String firstLine(String text) {
        if (text == null || text.isBlank()) {
            return "(no body)";
        }
        String t = text.strip();
        int nl = t.indexOf('\n');
        t = nl < 0 ? t : t.substring(0, nl);
        return t.length() > 300 ? t.substring(0, 300) + "..." : t;
    }
}
