package org.lungflag.service.normalize;

import java.nio.file.Path;
import org.springframework.boot.context.properties.ConfigurationProperties;

/**
 * Normalization settings ({@code lungflag.normalize.*}).
 *
 * @param conceptMap a FHIR ConceptMap (JSON) mapping the site's local codes onto Lungflag's input codes; the
 *     template is {@code ConceptMap-lungflag-site-codes} in the conformance package
 */
@ConfigurationProperties("lungflag.normalize")
public record NormalizeProperties(Path conceptMap) {}
