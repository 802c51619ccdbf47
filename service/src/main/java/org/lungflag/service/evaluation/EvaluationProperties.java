package org.lungflag.service.evaluation;

import java.nio.file.Path;
import java.time.Duration;
import java.time.ZoneId;
import java.util.Map;
import org.springframework.boot.context.properties.ConfigurationProperties;
import org.springframework.boot.context.properties.bind.DefaultValue;

/**
 * Evaluation settings ({@code lungflag.evaluation.*}).
 *
 * @param catalog a catalog folder to use instead of the built-in one (each rule in {@code <id>/rule.yaml})
 * @param params rule parameter overrides, {@code rule-id.parameter: value} (e.g. {@code hypoxemia.peep_min: 5})
 * @param window how much clinical time a patient timeline keeps (design.md default 48 h)
 * @param settingLookBack how old a setting (FiO2, PEEP...) may be and still count as in force at a blood gas
 * @param measurementLookBack the same for measured values
 * @param displayZone time zone for times in advisory texts only (never for logic)
 * @param clockGrace how far behind the wall clock the clinical clock is advanced for resolution and expiry, so a
 *     result that is charted a little late rarely reopens an advisory already closed
 * @param advanceInterval how often patients with active advisories have their clinical clock advanced
 * @param hydrate whether the first sight of a patient loads their recent Observations from the FHIR server
 * @param batchSize inbox rows processed per round
 * @param barometricPressure the site's barometric pressure in mmHg, if set: P/F is then also reported adjusted
 *     (Berlin 2012 footnote; a site setting for altitude, never a per-patient guess)
 */
@ConfigurationProperties("lungflag.evaluation")
public record EvaluationProperties(
        Path catalog,
        @DefaultValue Map<String, String> params,
        @DefaultValue("48h") Duration window,
        @DefaultValue("60m") Duration settingLookBack,
        @DefaultValue("30m") Duration measurementLookBack,
        @DefaultValue("UTC") ZoneId displayZone,
        @DefaultValue("15m") Duration clockGrace,
        @DefaultValue("1m") Duration advanceInterval,
        @DefaultValue("true") boolean hydrate,
        @DefaultValue("200") int batchSize,
        Double barometricPressure) {}
