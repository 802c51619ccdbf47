package org.lungflag.service.replay;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import org.lungflag.rules.catalog.Tier;
import org.lungflag.rules.engine.Episode;
import org.lungflag.rules.engine.TierChange;

/**
 * report.html: one self-contained page for the quality team (inline CSS, charts drawn here as inline SVG; no
 * script, no fonts, no network). Per rule: firings, patients, firings per 100 patient-days, time in each tier,
 * median onset to resolution; the distribution of each index; per-patient timelines with the episodes shaded; the
 * sweep; the refused lines by reason; and the caution that this is a retrospective estimate on charted data.
 */
final class ReportWriter {

    private static final String INK = "#1f2933";
    private static final String MUTED = "#6b7785";
    private static final String LINE = "#d5dbe1";
    private static final String ACCENT = "#2f5d8a";
    private static final String[] SERIES_COLOURS = {"#2f5d8a", "#7a4e9e", "#3d7f5c", "#8a6a2f", "#5c6b7a"};

    private final Replay replay;
    private final StringBuilder html = new StringBuilder(1 << 16);

    ReportWriter(Replay replay) {
        this.replay = replay;
    }

    void write(Path file) throws IOException {
        Files.writeString(file, render(), StandardCharsets.UTF_8);
    }

    String render() {
        html.setLength(0);
        html.append("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">")
                .append("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">")
                .append("<title>Lungflag replay report</title><style>")
                .append("body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;color:")
                .append(INK)
                .append(";max-width:1100px;margin:2rem auto;padding:0 1rem;line-height:1.45}")
                .append("h1{font-size:1.6rem;margin-bottom:.2rem}h2{font-size:1.2rem;margin-top:2.2rem;")
                .append("border-bottom:1px solid ")
                .append(LINE)
                .append(";padding-bottom:.3rem}h3{font-size:1rem;margin:1.2rem 0 .3rem}")
                .append("table{border-collapse:collapse;margin:.5rem 0;font-size:.92rem}")
                .append("th,td{padding:.3rem .6rem;border-bottom:1px solid ")
                .append(LINE)
                .append(";text-align:right}th:first-child,td:first-child{text-align:left}")
                .append("th{font-weight:600;background:#f4f6f8}.note{color:")
                .append(MUTED)
                .append(";font-size:.88rem}.caution{border:2px solid ")
                .append(INK)
                .append(";padding:.7rem 1rem;margin:1rem 0;background:#fbfbf7}")
                .append(".grid{display:flex;flex-wrap:wrap;gap:1rem}.cell{flex:1 1 320px}")
                .append("svg text{font-family:inherit}")
                .append("</style></head><body>\n");
        html.append("<h1>Lungflag replay report</h1>");
        html.append("<p class=\"note\">Clinical time covered: ")
                .append(esc(String.valueOf(replay.exportStart())))
                .append(" to ")
                .append(esc(String.valueOf(replay.exportEnd())))
                .append(". Catalog: ")
                .append(esc(replay.catalog().origin()))
                .append(".</p>");
        html.append("<div class=\"caution\"><strong>Caution.</strong> ")
                .append(esc(SummaryWriter.CAUTION))
                .append(" Thresholds are those of the catalog and parameters listed in summary.json; ")
                .append("those marked \"rule of thumb\" in the catalog must be validated locally.</div>\n");
        overview();
        rules();
        indices();
        sweep();
        rejected();
        timelines();
        html.append("<p class=\"note\">Made by the Lungflag replay command. Patient identifiers are resource ids"
                + " from the export; no names are read.</p></body></html>\n");
        return html.toString();
    }

    private void overview() {
        html.append("<h2>What was read</h2><table>");
        row("Input files", String.valueOf(replay.inputs().size()));
        row("Lines read", num(replay.lines));
        replay.byType.forEach((type, n) -> row("&nbsp;&nbsp;" + esc(type), num(n)));
        row("Lines refused (listed in rejected.ndjson)", num(replay.rejectedLines));
        row("Lines partly refused", num(replay.partlyRefusedLines));
        row("Patients evaluated", num(replay.patientsEvaluated));
        row("Patients without a Patient resource (sex and age unknown)", num(replay.patientsWithoutPatientResource));
        row("Patient-days", fmt(replay.patientDays, 1));
        row("Advisories (Flags in advisories.ndjson)", num(replay.flagsWritten));
        html.append("</table><p class=\"note\">Patient-days: ")
                .append(esc(SummaryWriter.PATIENT_DAYS_DEFINITION))
                .append("</p>");
    }

    private void rules() {
        html.append("<h2>Per rule</h2><p class=\"note\">A firing is an advisory raised: one episode from onset to"
                + " resolution or expiry, which the live service would have written as one Flag.</p>");
        html.append("<table><tr><th>Rule</th><th>Firings</th><th>Patients</th><th>Firings per 100 patient-days</th>"
                + "<th>Evaluations</th><th>Meeting a tier</th><th>Resolved</th><th>Expired</th>"
                + "<th>Active at end</th><th>Median onset to resolution</th></tr>");
        for (RuleTally t : replay.tallies.values()) {
            Double rate = RuleTally.per100PatientDays(t.onsets, replay.patientDays);
            Long median = t.medianOnsetToResolutionSeconds();
            html.append("<tr><td>")
                    .append(esc(t.ruleId))
                    .append("</td><td>")
                    .append(num(t.onsets))
                    .append("</td><td>")
                    .append(num(t.patients))
                    .append("</td><td>")
                    .append(rate == null ? "–" : fmt(rate, 2))
                    .append("</td><td>")
                    .append(num(t.evaluations))
                    .append("</td><td>")
                    .append(num(t.tierMet))
                    .append("</td><td>")
                    .append(num(t.resolved))
                    .append("</td><td>")
                    .append(num(t.expired))
                    .append("</td><td>")
                    .append(num(t.stillActive))
                    .append("</td><td>")
                    .append(median == null ? "–" : hours(median))
                    .append("</td></tr>");
        }
        html.append("</table><h3>Time in each tier</h3>");
        html.append("<p class=\"note\">Hours that episodes spent in each tier, from each tier change to the next,"
                + " to the episode's end, or (still active) to the end of the export.</p>");
        timeInTierChart();
    }

    private void timeInTierChart() {
        List<String[]> bars = new ArrayList<>(); // rule, tier, hours
        double max = 0;
        for (RuleTally t : replay.tallies.values()) {
            for (Map.Entry<String, Long> e : t.secondsInTier.entrySet()) {
                double h = e.getValue() / 3600.0;
                bars.add(new String[] {t.ruleId, e.getKey(), Double.toString(h)});
                max = Math.max(max, h);
            }
        }
        if (bars.isEmpty()) {
            html.append("<p>No episodes.</p>");
            return;
        }
        int rowH = 22;
        int width = 900;
        int label = 330;
        int height = bars.size() * rowH + 10;
        svgOpen(width, height, "Hours in each tier per rule");
        for (int i = 0; i < bars.size(); i++) {
            double h = Double.parseDouble(bars.get(i)[2]);
            double w = max > 0 ? (width - label - 90) * h / max : 0;
            int y = 5 + i * rowH;
            text(label - 8, y + 15, "end", bars.get(i)[0] + " · " + bars.get(i)[1], 12, INK);
            html.append(String.format(
                    Locale.ROOT,
                    "<rect x=\"%d\" y=\"%d\" width=\"%.1f\" height=\"%d\" fill=\"%s\" opacity=\"%.2f\"/>",
                    label,
                    y + 3,
                    w,
                    rowH - 6,
                    ACCENT,
                    0.35 + 0.2 * rank(bars.get(i)[0], bars.get(i)[1])));
            text(label + (int) w + 6, y + 15, "start", fmt(h, 1) + " h", 12, MUTED);
        }
        html.append("</svg>");
    }

    private int rank(String ruleId, String tierCode) {
        return replay.catalog()
                .rule(ruleId)
                .flatMap(r -> r.tier(tierCode))
                .map(Tier::rank)
                .orElse(0);
    }

    private void indices() {
        html.append("<h2>Distribution of each index</h2><p class=\"note\">One value per patient and evaluation"
                        + " time, as computed for the rules. Histograms of up to ")
                .append(num(IndexDistribution.CAP))
                .append(" values per index, chosen by a hash of patient and time when there are more.</p>");
        if (replay.distributions.isEmpty()) {
            html.append("<p>No index was computed.</p>");
            return;
        }
        html.append("<div class=\"grid\">");
        for (IndexDistribution d : replay.distributions.values()) {
            List<Double> sorted = d.sortedSample();
            long[] bins = d.histogram(sorted, 20);
            html.append("<div class=\"cell\"><h3>")
                    .append(esc(d.code))
                    .append(d.unit == null || d.unit.equals("1") ? "" : " (" + esc(d.unit) + ")")
                    .append("</h3><p class=\"note\">n = ")
                    .append(num(d.count))
                    .append(", median ")
                    .append(fmt(IndexDistribution.quantile(sorted, 0.5), 2))
                    .append(", 10th–90th percentile ")
                    .append(fmt(IndexDistribution.quantile(sorted, 0.1), 2))
                    .append("–")
                    .append(fmt(IndexDistribution.quantile(sorted, 0.9), 2))
                    .append("</p>");
            histogram(bins, sorted.get(0), sorted.get(sorted.size() - 1), d.code);
            html.append("</div>");
        }
        html.append("</div>");
    }

    private void histogram(long[] bins, double lo, double hi, String title) {
        int width = 340;
        int height = 150;
        int left = 36;
        int bottom = 24;
        long max = 1;
        for (long b : bins) {
            max = Math.max(max, b);
        }
        svgOpen(width, height, "Histogram of " + title);
        double bw = (width - left - 6) / (double) bins.length;
        for (int i = 0; i < bins.length; i++) {
            double h = (height - bottom - 8) * bins[i] / (double) max;
            html.append(String.format(
                    Locale.ROOT,
                    "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" fill=\"%s\"><title>%s</title></rect>",
                    left + i * bw + 1,
                    height - bottom - h,
                    Math.max(0.5, bw - 2),
                    h,
                    ACCENT,
                    num(bins[i])));
        }
        line(left, height - bottom, width - 4, height - bottom, MUTED);
        text(left, height - 6, "start", fmt(lo, 1), 11, MUTED);
        text(width - 6, height - 6, "end", fmt(hi, 1), 11, MUTED);
        text(left - 4, 14, "end", num(max), 11, MUTED);
        html.append("</svg>");
    }

    private void sweep() {
        html.append("<h2>Threshold sweep</h2>");
        if (replay.sweepKey() == null) {
            html.append("<p class=\"note\">No sweep was asked for (--sweep RULE.PARAM=V1,V2,...).</p>");
            return;
        }
        html.append("<p>The catalog run once per value of <code>")
                .append(esc(replay.sweepKey()))
                .append("</code>, everything else as above.</p><table><tr><th>Value</th><th>Firings</th>"
                        + "<th>Patients</th><th>Firings per 100 patient-days</th><th>Evaluations meeting a tier</th>"
                        + "<th>Median onset to resolution</th></tr>");
        List<Double> xs = new ArrayList<>();
        List<Long> ys = new ArrayList<>();
        boolean numeric = true;
        for (int i = 0; i < replay.sweepValues().size(); i++) {
            RuleTally t = replay.variantTallies.get(i).values().iterator().next();
            Double rate = RuleTally.per100PatientDays(t.onsets, replay.patientDays);
            Long median = t.medianOnsetToResolutionSeconds();
            html.append("<tr><td>")
                    .append(esc(replay.sweepValues().get(i)))
                    .append("</td><td>")
                    .append(num(t.onsets))
                    .append("</td><td>")
                    .append(num(t.patients))
                    .append("</td><td>")
                    .append(rate == null ? "–" : fmt(rate, 2))
                    .append("</td><td>")
                    .append(num(t.tierMet))
                    .append("</td><td>")
                    .append(median == null ? "–" : hours(median))
                    .append("</td></tr>");
            try {
                xs.add(Double.parseDouble(replay.sweepValues().get(i)));
            } catch (NumberFormatException e) {
                numeric = false;
            }
            ys.add(t.onsets);
        }
        html.append("</table>");
        if (numeric && xs.size() > 1) {
            sweepChart(xs, ys);
        }
    }

    private void sweepChart(List<Double> xs, List<Long> ys) {
        int width = 520;
        int height = 200;
        int left = 50;
        int bottom = 30;
        double xmin = xs.stream().mapToDouble(Double::doubleValue).min().orElse(0);
        double xmax = xs.stream().mapToDouble(Double::doubleValue).max().orElse(1);
        long ymax = Math.max(1, ys.stream().mapToLong(Long::longValue).max().orElse(1));
        svgOpen(width, height, "Firings per sweep value");
        StringBuilder pts = new StringBuilder();
        for (int i = 0; i < xs.size(); i++) {
            double x = left + (width - left - 20) * (xmax > xmin ? (xs.get(i) - xmin) / (xmax - xmin) : 0.5);
            double y = height - bottom - (height - bottom - 15) * ys.get(i) / (double) ymax;
            pts.append(String.format(Locale.ROOT, "%.1f,%.1f ", x, y));
            html.append(String.format(
                    Locale.ROOT, "<circle cx=\"%.1f\" cy=\"%.1f\" r=\"3.5\" fill=\"%s\"/>", x, y, ACCENT));
            text((int) x, height - 10, "middle", fmt(xs.get(i), 2), 11, MUTED);
        }
        html.append("<polyline fill=\"none\" stroke=\"")
                .append(ACCENT)
                .append("\" stroke-width=\"2\" points=\"")
                .append(pts)
                .append("\"/>");
        line(left, height - bottom, width - 10, height - bottom, MUTED);
        text(left - 6, 18, "end", num(ymax), 11, MUTED);
        text(left - 6, height - bottom, "end", "0", 11, MUTED);
        html.append("</svg><p class=\"note\">Firings (advisories raised) per value.</p>");
    }

    private void rejected() {
        html.append("<h2>Refused lines by reason</h2>");
        if (replay.rejectedByReason.isEmpty()) {
            html.append("<p>Every line was used.</p>");
            return;
        }
        html.append("<p class=\"note\">Each refusal is in rejected.ndjson as an OperationOutcome with the file, line"
                + " number and the reason from the data-quality CodeSystem. A whole line refused is an error; a"
                + " refused part of a line that was otherwise used (one component of a panel) is a warning.</p>");
        long max = replay.rejectedByReason.values().stream()
                .mapToLong(Long::longValue)
                .max()
                .orElse(1);
        int rowH = 22;
        int width = 760;
        int label = 250;
        svgOpen(width, replay.rejectedByReason.size() * rowH + 10, "Refusals by reason");
        int i = 0;
        for (Map.Entry<String, Long> e : replay.rejectedByReason.entrySet()) {
            int y = 5 + i++ * rowH;
            double w = (width - label - 80) * e.getValue() / (double) max;
            text(label - 8, y + 15, "end", e.getKey(), 12, INK);
            html.append(String.format(
                    Locale.ROOT,
                    "<rect x=\"%d\" y=\"%d\" width=\"%.1f\" height=\"%d\" fill=\"%s\"/>",
                    label,
                    y + 3,
                    Math.max(1, w),
                    rowH - 6,
                    MUTED));
            text(label + (int) w + 6, y + 15, "start", num(e.getValue()), 12, INK);
        }
        html.append("</svg>");
    }

    private void timelines() {
        html.append("<h2>Patient timelines</h2><p class=\"note\">Up to ")
                .append(Replay.CHARTED_PATIENTS)
                .append(" patients, first those with advisories, in the order of the output files. Shaded bands are"
                        + " advisory episodes (darker for a more severe tier); each panel has its own scale.</p>");
        if (replay.charts.isEmpty()) {
            html.append("<p>No patient had data to draw.</p>");
        }
        for (PatientChart c : replay.charts) {
            html.append("<h3>Patient/").append(esc(c.patientId())).append("</h3>");
            StringBuilder eps = new StringBuilder();
            for (Episode e : c.episodes()) {
                if (!eps.isEmpty()) {
                    eps.append("; ");
                }
                eps.append(e.ruleId())
                        .append(" ")
                        .append(e.tier())
                        .append(" from ")
                        .append(e.start())
                        .append(e.end() == null ? " (active at end)" : " to " + e.end() + " (" + e.status() + ")");
            }
            html.append("<p class=\"note\">")
                    .append(eps.isEmpty() ? "No advisory." : esc(eps.toString()))
                    .append("</p>");
            timeline(c);
        }
    }

    private void timeline(PatientChart c) {
        int width = 1000;
        int left = 130;
        int right = 20;
        int panelH = 70;
        int gap = 10;
        List<String> shown = new ArrayList<>();
        c.series().forEach((name, pts) -> {
            if (!pts.isEmpty()) {
                shown.add(name);
            }
        });
        int height = shown.size() * (panelH + gap) + 30;
        Instant from = c.from();
        Instant to = c.to().isAfter(from) ? c.to() : from.plusSeconds(3600);
        double span = Duration.between(from, to).toSeconds();
        svgOpen(width, Math.max(height, 60), "Timeline of Patient/" + c.patientId());
        int plotW = width - left - right;
        // episodes first, under the lines, tier by tier
        for (Episode e : c.episodes()) {
            List<TierChange> h = e.tierHistory();
            Instant stop = e.end() != null ? e.end() : to;
            for (int i = 0; i < h.size(); i++) {
                Instant a = h.get(i).at();
                Instant b = i + 1 < h.size() ? h.get(i + 1).at() : stop;
                double x0 = left + plotW * clamp(Duration.between(from, a).toSeconds() / span);
                double x1 = left + plotW * clamp(Duration.between(from, b).toSeconds() / span);
                html.append(String.format(
                        Locale.ROOT,
                        "<rect x=\"%.1f\" y=\"0\" width=\"%.1f\" height=\"%d\" fill=\"%s\" opacity=\"%.2f\">"
                                + "<title>%s</title></rect>",
                        x0,
                        Math.max(1, x1 - x0),
                        height - 30,
                        "#c9a227",
                        0.12 + 0.1 * rank(e.ruleId(), h.get(i).tier()),
                        esc(e.ruleId() + " " + h.get(i).tier())));
            }
        }
        for (int p = 0; p < shown.size(); p++) {
            String name = shown.get(p);
            List<PatientChart.Point> pts = c.series().get(name);
            int top = p * (panelH + gap) + 5;
            double lo =
                    pts.stream().mapToDouble(PatientChart.Point::value).min().orElse(0);
            double hi =
                    pts.stream().mapToDouble(PatientChart.Point::value).max().orElse(1);
            if (hi - lo < 1e-9) {
                lo -= 1;
                hi += 1;
            }
            String unit = PatientChart.SERIES.getOrDefault(name, "");
            text(left - 8, top + panelH / 2 + 4, "end", name + (unit.isEmpty() ? "" : " (" + unit + ")"), 12, INK);
            text(left - 8, top + 10, "end", fmt(hi, 2), 10, MUTED);
            text(left - 8, top + panelH, "end", fmt(lo, 2), 10, MUTED);
            line(left, top + panelH, width - right, top + panelH, LINE);
            StringBuilder path = new StringBuilder();
            String colour = SERIES_COLOURS[p % SERIES_COLOURS.length];
            for (PatientChart.Point pt : pts) {
                double x = left + plotW * clamp(Duration.between(from, pt.at()).toSeconds() / span);
                double y = top + panelH - (panelH - 6) * (pt.value() - lo) / (hi - lo);
                path.append(String.format(Locale.ROOT, "%.1f,%.1f ", x, y));
                html.append(String.format(
                        Locale.ROOT,
                        "<circle cx=\"%.1f\" cy=\"%.1f\" r=\"2.2\" fill=\"%s\"><title>%s %s at %s</title></circle>",
                        x,
                        y,
                        colour,
                        esc(name),
                        fmt(pt.value(), 2),
                        pt.at()));
            }
            html.append("<polyline fill=\"none\" stroke=\"")
                    .append(colour)
                    .append("\" stroke-width=\"1.4\" points=\"")
                    .append(path)
                    .append("\"/>");
        }
        int axisY = height - 22;
        line(left, axisY, width - right, axisY, MUTED);
        text(left, axisY + 16, "start", from.toString(), 10, MUTED);
        text(width - right, axisY + 16, "end", to.toString(), 10, MUTED);
        text(left + plotW / 2, axisY + 16, "middle", fmt(span / 3600.0, 1) + " h", 10, MUTED);
        html.append("</svg>");
    }

    // ------------------------------------------------------------------------------------------------ helpers

    private void svgOpen(int width, int height, String title) {
        html.append(String.format(
                Locale.ROOT,
                "<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 %d %d\" width=\"100%%\" style=\"max-width:%dpx\""
                        + " role=\"img\" aria-label=\"%s\">",
                width,
                height,
                width,
                esc(title)));
    }

    private void text(int x, int y, String anchor, String s, int size, String colour) {
        html.append(String.format(
                Locale.ROOT,
                "<text x=\"%d\" y=\"%d\" text-anchor=\"%s\" font-size=\"%d\" fill=\"%s\">%s</text>",
                x,
                y,
                anchor,
                size,
                colour,
                esc(s)));
    }

    private void line(int x1, int y1, int x2, int y2, String colour) {
        html.append(String.format(
                Locale.ROOT,
                "<line x1=\"%d\" y1=\"%d\" x2=\"%d\" y2=\"%d\" stroke=\"%s\" stroke-width=\"1\"/>",
                x1,
                y1,
                x2,
                y2,
                colour));
    }

    private void row(String label, String value) {
        html.append("<tr><td>").append(label).append("</td><td>").append(value).append("</td></tr>");
    }

    private static double clamp(double v) {
        return Math.max(0, Math.min(1, v));
    }

    static String num(long n) {
        return String.format(Locale.ROOT, "%,d", n);
    }

    static String fmt(double v, int decimals) {
        if (!Double.isFinite(v)) {
            return "–";
        }
        return String.format(Locale.ROOT, "%,." + decimals + "f", v);
    }

    static String hours(long seconds) {
        return fmt(seconds / 3600.0, 1) + " h";
    }

    static String esc(String s) {
        if (s == null) {
            return "";
        }
        StringBuilder sb = new StringBuilder(s.length());
        for (char ch : s.toCharArray()) {
            switch (ch) {
                case '<' -> sb.append("&lt;");
                case '>' -> sb.append("&gt;");
                case '&' -> sb.append("&amp;");
                case '"' -> sb.append("&quot;");
                case '\'' -> sb.append("&#39;");
                default -> sb.append(ch);
            }
        }
        return sb.toString();
    }
}
