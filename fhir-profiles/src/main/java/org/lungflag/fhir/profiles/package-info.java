/**
 * Lungflag's FHIR R4 conformance package: {@link org.lungflag.fhir.profiles.LungflagFhir} names its canonical URLs
 * and the classpath location of the package ({@code .tgz}) that the build packs from {@code src/main/fhir}.
 */
package org.lungflag.fhir.profiles;
