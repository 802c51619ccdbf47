package org.lungflag.service.testsupport;

import java.lang.annotation.ElementType;
import java.lang.annotation.Retention;
import java.lang.annotation.RetentionPolicy;
import java.lang.annotation.Target;
import org.junit.jupiter.api.extension.ExtendWith;

/**
 * A browser test that needs Debian's headless chromium and chromedriver ({@code /usr/bin/chromium},
 * {@code /usr/bin/chromedriver}; override with LUNGFLAG_TEST_CHROMIUM and LUNGFLAG_TEST_CHROMEDRIVER). Skipped
 * where they are missing; {@code .ci/run} installs them and fails when a {@code *Browser*} report shows a skip, so
 * CI cannot pass without running them. Name such classes with {@code Browser} in the name.
 */
@Target(ElementType.TYPE)
@Retention(RetentionPolicy.RUNTIME)
@ExtendWith(ChromiumCondition.class)
public @interface RequiresChromium {}
