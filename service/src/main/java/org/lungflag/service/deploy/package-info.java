/**
 * Deployment support: {@link org.lungflag.service.deploy.HttpProbe}, the JDK-only health probe the container images
 * run (the FHIR server's image has no shell, curl or wget). The images and {@code docker-compose.yml} live at the
 * repository root; README.md "Deployment" describes them.
 */
package org.lungflag.service.deploy;
