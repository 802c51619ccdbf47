package org.lungflag.service.testsupport;

import java.nio.file.Files;
import java.nio.file.Path;
import org.junit.jupiter.api.extension.ConditionEvaluationResult;
import org.junit.jupiter.api.extension.ExecutionCondition;
import org.junit.jupiter.api.extension.ExtensionContext;

/** See {@link RequiresChromium}. */
public final class ChromiumCondition implements ExecutionCondition {

    public static Path chromium() {
        return Path.of(env("LUNGFLAG_TEST_CHROMIUM", "/usr/bin/chromium"));
    }

    public static Path chromedriver() {
        return Path.of(env("LUNGFLAG_TEST_CHROMEDRIVER", "/usr/bin/chromedriver"));
    }

    private static String env(String name, String fallback) {
        String v = System.getenv(name);
        return v == null || v.isBlank() ? fallback : v;
    }

    @Override
    public ConditionEvaluationResult evaluateExecutionCondition(ExtensionContext context) {
        if (!Files.isExecutable(chromium())) {
            return ConditionEvaluationResult.disabled("no chromium at " + chromium() + " (apt-get install chromium)");
        }
        if (!Files.isExecutable(chromedriver())) {
            return ConditionEvaluationResult.disabled(
                    "no chromedriver at " + chromedriver() + " (apt-get install chromium-driver)");
        }
        return ConditionEvaluationResult.enabled("chromium and chromedriver are installed");
    }
}
