package org.lungflag.service.e2e;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.MethodOrderer;
import org.junit.jupiter.api.Order;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.TestInstance;
import org.junit.jupiter.api.TestMethodOrder;
import org.lungflag.rules.catalog.Cautions;
import org.lungflag.service.intake.SubscriptionRegistrar;
import org.lungflag.service.testsupport.ApiClient;
import org.lungflag.service.testsupport.ChromiumCondition;
import org.lungflag.service.testsupport.RequiresChromium;
import org.lungflag.service.testsupport.TestAccounts;
import org.openqa.selenium.By;
import org.openqa.selenium.Dimension;
import org.openqa.selenium.JavascriptExecutor;
import org.openqa.selenium.OutputType;
import org.openqa.selenium.WebElement;
import org.openqa.selenium.chrome.ChromeDriver;
import org.openqa.selenium.chrome.ChromeDriverService;
import org.openqa.selenium.chrome.ChromeOptions;
import org.openqa.selenium.interactions.Actions;
import org.openqa.selenium.support.ui.WebDriverWait;
import org.springframework.beans.factory.annotation.Autowired;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.boot.test.web.server.LocalServerPort;
import org.springframework.test.annotation.DirtiesContext;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.DynamicPropertyRegistry;
import org.springframework.test.context.DynamicPropertySource;

/**
 * The console in a real headless chromium (Debian's chromium + chromedriver through Selenium), on data that went
 * through the real pipeline (embedded HAPI server → rest-hook → evaluation → audit; {@link AuditScenario}): sign in,
 * open every page, check the advisories, charts and cautions a user relies on, and save a screenshot of each page
 * under {@code service/target/screenshots/}. Clinical values: Berlin 2012 bands (P/F 160 moderate, 90 severe).
 */
@RequiresChromium
@SpringBootTest(webEnvironment = SpringBootTest.WebEnvironment.DEFINED_PORT)
@ActiveProfiles("test")
@DirtiesContext(classMode = DirtiesContext.ClassMode.AFTER_CLASS)
@TestInstance(TestInstance.Lifecycle.PER_CLASS)
@TestMethodOrder(MethodOrderer.OrderAnnotation.class)
class ConsoleBrowserTest {

    static final Path SCREENSHOTS = Path.of("target", "screenshots");

    @DynamicPropertySource
    static void sandbox(DynamicPropertyRegistry registry) {
        SandboxServer.register(registry);
        registry.add("lungflag.intake.register-subscriptions", () -> "true");
        registry.add("lungflag.intake.catch-up-initial-look-back", () -> "1s");
        registry.add("lungflag.evaluation.advance-interval", () -> "1h");
    }

    @LocalServerPort
    int port;

    @Autowired
    SubscriptionRegistrar registrar;

    AuditScenario scenario;
    ChromeDriver browser;
    WebDriverWait wait;
    AuditScenario.Made worsening;
    AuditScenario.Made improving;
    String badUnit;

    @BeforeAll
    void dataAndBrowser() throws IOException {
        scenario = new AuditScenario();
        ApiClient api = ApiClient.auditor(port);
        await().atMost(Duration.ofSeconds(60)).until(registrar::registered);
        Instant t0 = Instant.now().minus(20, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        worsening = scenario.worsening(t0);
        improving = scenario.improving(t0);
        badUnit = scenario.badUnit(worsening.patient(), t0.plus(3, ChronoUnit.HOURS));
        await().atMost(Duration.ofSeconds(90)).untilAsserted(() -> {
            assertThat(api.json("/api/v1/advisories?code=hypoxemia-severe&patient=" + worsening.patient()))
                    .hasSize(1);
            assertThat(api.json("/api/v1/advisories?status=resolved&patient=" + improving.patient()))
                    .isNotEmpty();
            assertThat(api.json("/api/v1/quarantine?reason=unknown-unit")).isNotEmpty();
        });

        Files.createDirectories(SCREENSHOTS);
        ChromeOptions options = new ChromeOptions();
        options.setBinary(ChromiumCondition.chromium().toFile());
        options.addArguments(
                "--headless=new",
                "--no-sandbox",
                "--disable-dev-shm-usage",
                "--disable-gpu",
                "--window-size=1400,1000",
                "--lang=en-GB");
        ChromeDriverService service = new ChromeDriverService.Builder()
                .usingDriverExecutable(ChromiumCondition.chromedriver().toFile())
                .usingAnyFreePort()
                .build();
        browser = new ChromeDriver(service, options);
        browser.manage().window().setSize(new Dimension(1400, 1000));
        wait = new WebDriverWait(browser, Duration.ofSeconds(20));
        // a form post reloads the page: an element found just before the reload is stale (or "does not belong to
        // the document") when read; look again until the timeout, which then reports the last such error
        wait.ignoring(org.openqa.selenium.WebDriverException.class);
    }

    @AfterAll
    void closeBrowser() {
        if (browser != null) {
            browser.quit();
        }
        if (scenario != null) {
            AuditScenario.deleteSubscriptionsOf(scenario, port);
        }
    }

    private String url(String path) {
        return "http://127.0.0.1:" + port + path;
    }

    private void screenshot(String name) {
        // the whole page: resize to the document's height first
        Object height = ((JavascriptExecutor) browser).executeScript("return document.documentElement.scrollHeight");
        int h = Math.min(Math.max(((Number) height).intValue(), 800), 6000);
        browser.manage().window().setSize(new Dimension(1400, h));
        try {
            Path file = browser.getScreenshotAs(OutputType.FILE).toPath();
            Files.copy(file, SCREENSHOTS.resolve(name + ".png"), StandardCopyOption.REPLACE_EXISTING);
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        } finally {
            browser.manage().window().setSize(new Dimension(1400, 1000));
        }
    }

    private String text(By by) {
        return browser.findElement(by).getText();
    }

    private void assertCaution() {
        WebElement caution = browser.findElement(By.cssSelector("aside.caution"));
        assertThat(caution.isDisplayed()).isTrue();
        assertThat(caution.getText()).contains("Caution").contains("Advisory only");
    }

    @Test
    @Order(1)
    void signingInLeadsFromTheLoginPageToTheOverview() {
        browser.get(url("/console"));
        wait.until(d -> d.getCurrentUrl().endsWith("/login"));
        assertThat(browser.findElement(By.cssSelector("label[for=username]")).getText())
                .isEqualTo("User name");
        screenshot("01-login");
        browser.findElement(By.id("username")).sendKeys(TestAccounts.ADMIN);
        browser.findElement(By.id("password")).sendKeys("wrong");
        browser.findElement(By.cssSelector("form button[type=submit]")).click();
        wait.until(d -> d.getCurrentUrl().contains("/login?error"));
        assertThat(text(By.cssSelector("[role=alert]"))).contains("did not match");
        browser.findElement(By.id("username")).sendKeys(TestAccounts.ADMIN);
        browser.findElement(By.id("password")).sendKeys(TestAccounts.ADMIN_PASSWORD);
        browser.findElement(By.cssSelector("form button[type=submit]")).click();
        wait.until(d -> d.getCurrentUrl().matches(".*/console(\\?continue)?$"));
        assertThat(text(By.tagName("h1"))).isEqualTo("Overview");
    }

    @Test
    @Order(2)
    void theOverviewShowsIntakeHealthAndTheActiveAdvisoriesWithTheCaution() {
        browser.get(url("/console"));
        String health = text(By.id("health"));
        assertThat(health)
                .contains("Last notification received")
                .contains("Catch-up search lag")
                .contains("Write-back waiting")
                .contains("Quarantined inputs")
                .contains("FHIR server\nUP")
                .contains("Audit database\nUP");
        assertThat(text(By.id("active")))
                .contains("Patient/" + worsening.patient())
                .contains("hypoxemia-severe");
        assertCaution();
        screenshot("02-overview");
    }

    @Test
    @Order(3)
    void theAdvisoryListFiltersAndLinksToTheEpisode() {
        browser.get(url("/console/advisories"));
        new org.openqa.selenium.support.ui.Select(browser.findElement(By.id("rule"))).selectByValue("hypoxemia");
        browser.findElement(By.id("patient")).sendKeys(worsening.patient());
        browser.findElement(By.cssSelector("form.filters button[type=submit]")).click();
        wait.until(d -> d.getCurrentUrl().contains("patient=" + worsening.patient()));
        List<WebElement> rows = browser.findElements(By.cssSelector("#advisories tbody tr"));
        assertThat(rows).hasSize(1);
        assertThat(rows.get(0).getText()).contains("hypoxemia-severe").contains("active");
        assertCaution();
        screenshot("03-advisories");
        rows.get(0).findElement(By.linkText("hypoxemia-severe")).click();
        wait.until(d -> d.getCurrentUrl().contains("/console/advisories/"));
    }

    @Test
    @Order(4)
    void theEpisodePageExplainsTheAdvisoryInPlainWordsWithItsInputsAndCaution() {
        browser.get(url("/console/advisories?rule=hypoxemia&patient=" + worsening.patient()));
        browser.findElement(By.linkText("hypoxemia-severe")).click();
        wait.until(d -> d.getCurrentUrl().contains("/console/advisories/"));
        assertThat(text(By.cssSelector("p.advisory"))).isNotBlank();
        assertThat(text(By.cssSelector("aside.caution"))).contains(Cautions.GENERAL.substring(0, 40));
        String evaluations = text(By.id("evaluations"));
        assertThat(evaluations)
                .contains("onset")
                .contains("escalated")
                .contains(worsening.firstPao2() + "/_history/1")
                .contains("PaO2 80 mmHg")
                .contains("PaO2/FiO2 ratio = 160 mmHg (formula pf-ratio v");
        String episodeUrl = browser.getCurrentUrl();
        await().atMost(Duration.ofSeconds(60)).untilAsserted(() -> {
            browser.get(episodeUrl);
            assertThat(text(By.id("writes"))).contains("delivered").doesNotContain("pending");
        });
        screenshot("04-episode");
    }

    @Test
    @Order(5)
    void thePatientTimelineDrawsTheChartsWithEpisodesAndEachEvaluationOpensItsInputs() {
        browser.get(url("/console/patients/" + worsening.patient()));
        wait.until(d -> "true".equals(d.findElement(By.id("timeline")).getAttribute("data-ready")));
        JavascriptExecutor js = browser;
        for (String chart : List.of("chart-oxygenation", "chart-ventilation", "chart-settings")) {
            Number points = (Number) js.executeScript(
                    "var c = Chart.getChart(arguments[0]); return c.data.datasets[0].data.length;", chart);
            assertThat(points.intValue()).as(chart).isPositive();
        }
        Object pf = js.executeScript(
                "return Chart.getChart('chart-oxygenation').data.datasets[0].data.map(function(p){return p.y;});");
        assertThat((List<?>) pf).map(v -> ((Number) v).doubleValue()).contains(160.0, 90.0);
        Number bands = (Number)
                js.executeScript("return Chart.getChart('chart-oxygenation').options.plugins.episodes.bands.length;");
        assertThat(bands.intValue()).isPositive();
        assertThat(text(By.id("timeline-status"))).contains("evaluations");
        assertThat(browser.findElements(By.cssSelector("#evaluation-table tbody tr")))
                .isNotEmpty();
        assertCaution();
        screenshot("05-patient-timeline");
        // click the first P/F point on the canvas: it opens that evaluation's inputs
        WebElement canvas = browser.findElement(By.id("chart-oxygenation"));
        @SuppressWarnings("unchecked")
        List<Number> xy = (List<Number>) js.executeScript("var c = Chart.getChart('chart-oxygenation');"
                + " var p = c.getDatasetMeta(0).data[0]; var r = c.canvas.getBoundingClientRect();"
                + " return [p.x - r.width / 2, p.y - r.height / 2];");
        new Actions(browser)
                .moveToElement(canvas, xy.get(0).intValue(), xy.get(1).intValue())
                .click()
                .perform();
        wait.until(d -> d.getCurrentUrl().contains("/console/evaluations/"));
        assertThat(text(By.id("inputs"))).contains(worsening.firstPao2() + "/_history/1");
        assertThat(text(By.id("indices"))).contains("PaO2/FiO2 ratio").contains("160 mmHg");
        assertThat(text(By.id("parameters"))).contains("pf_moderate_max");
        assertCaution();
        screenshot("06-evaluation");
    }

    @Test
    @Order(6)
    void theRulesPagesShowDefinitionsParametersSourcesAndLetAnAdminSwitchTheMode() {
        browser.get(url("/console/rules"));
        String rules = text(By.id("rules"));
        assertThat(rules).contains("hypoxemia").contains("active");
        screenshot("07-rules");
        browser.findElement(By.linkText("hypoxemia")).click();
        wait.until(d -> d.getCurrentUrl().endsWith("/console/rules/hypoxemia"));
        assertThat(text(By.id("tiers"))).contains("hypoxemia-moderate").contains("hypoxemia-severe");
        assertThat(text(By.id("parameters"))).contains("pf_moderate_max").contains("berlin-2012");
        assertThat(text(By.id("onsets"))).isEqualTo("2");
        browser.findElement(By.cssSelector("#mode-form input[value=SILENT]")).click();
        browser.findElement(By.id("reason")).sendKeys("browser test: silent for a week");
        browser.findElement(By.cssSelector("#mode-form button[type=submit]")).click();
        wait.until(d -> d.findElements(By.cssSelector("p.notice")).size() == 1);
        assertThat(text(By.id("mode"))).isEqualTo("silent");
        assertThat(text(By.id("changes")))
                .contains("browser test: silent for a week")
                .contains(TestAccounts.ADMIN);
        screenshot("08-rule");
        browser.findElement(By.cssSelector("#mode-form input[value=ACTIVE]")).click();
        browser.findElement(By.cssSelector("#mode-form button[type=submit]")).click();
        wait.until(d -> d.findElement(By.id("mode")).getText().equals("active"));
    }

    @Test
    @Order(7)
    void theQuarantinePageListsTheRefusedInputWithItsReason() {
        browser.get(url("/console/quarantine"));
        String table = text(By.id("quarantine"));
        assertThat(table).contains("unknown-unit").contains(badUnit + "/_history/1");
        screenshot("09-quarantine");
    }

    @Test
    @Order(8)
    void everyPageCanBeUsedWithTheKeyboardAlone() {
        browser.get(url("/console"));
        // the first Tab reaches the skip link, which is then visible
        new Actions(browser).sendKeys(org.openqa.selenium.Keys.TAB).perform();
        WebElement focused = browser.switchTo().activeElement();
        assertThat(focused.getText()).isEqualTo("Skip to content");
        Object outline = ((JavascriptExecutor) browser)
                .executeScript("return getComputedStyle(document.activeElement).outlineStyle;");
        assertThat(outline).isEqualTo("solid");
    }
}
