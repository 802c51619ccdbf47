package org.lungflag.service.intake;

import java.nio.charset.StandardCharsets;
import java.security.MessageDigest;
import java.security.SecureRandom;
import java.util.HexFormat;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.stereotype.Component;

/**
 * The shared secret of the rest-hook channel. Compared in constant time; never logged, never returned by any
 * endpoint.
 */
@Component
public class HookToken {

    private static final Logger log = LoggerFactory.getLogger(HookToken.class);

    private final byte[] expected;
    private final String headerValue;

    HookToken(IntakeProperties properties) {
        String token = properties.hookToken();
        if (token == null || token.isBlank()) {
            byte[] random = new byte[32];
            new SecureRandom().nextBytes(random);
            token = HexFormat.of().formatHex(random);
            log.info("lungflag.intake.hook-token is not set: generated a random hook token for this run"
                    + " (it is written into the Subscriptions Lungflag registers; set LUNGFLAG_INTAKE_HOOK_TOKEN"
                    + " to fix it across restarts)");
        }
        this.headerValue = "Bearer " + token;
        this.expected = headerValue.getBytes(StandardCharsets.UTF_8);
    }

    /** True when the Authorization header carries the token. Constant time in the header's content. */
    public boolean matches(String authorizationHeader) {
        if (authorizationHeader == null) {
            return false;
        }
        return MessageDigest.isEqual(expected, authorizationHeader.getBytes(StandardCharsets.UTF_8));
    }

    /** The header line a Subscription must carry: {@code Authorization: Bearer ...}. */
    public String subscriptionHeader() {
        return "Authorization: " + headerValue;
    }

    @Override
    public String toString() {
        return "HookToken[hidden]";
    }
}
