package org.lungflag.service.testsupport;

import java.net.http.HttpRequest;
import java.nio.charset.StandardCharsets;
import java.util.Base64;

/** The test accounts of application-test.yaml, and HTTP Basic headers for them. */
public final class TestAccounts {

    public static final String AUDITOR = "test-auditor";
    public static final String AUDITOR_PASSWORD = "test-auditor-password";
    public static final String ADMIN = "test-admin";
    public static final String ADMIN_PASSWORD = "test-admin-password";

    private TestAccounts() {}

    public static String basic(String user, String password) {
        return "Basic " + Base64.getEncoder().encodeToString((user + ":" + password).getBytes(StandardCharsets.UTF_8));
    }

    public static String auditor() {
        return basic(AUDITOR, AUDITOR_PASSWORD);
    }

    public static String admin() {
        return basic(ADMIN, ADMIN_PASSWORD);
    }

    /** Adds the auditor's Basic header. */
    public static HttpRequest.Builder asAuditor(HttpRequest.Builder b) {
        return b.header("Authorization", auditor());
    }

    /** Adds the admin's Basic header. */
    public static HttpRequest.Builder asAdmin(HttpRequest.Builder b) {
        return b.header("Authorization", admin());
    }
}
