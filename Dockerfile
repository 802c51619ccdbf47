# syntax=docker/dockerfile:1.7
# Lungflag images, built from this repository (docker-compose.yml builds each target):
#   service      the Lungflag service: layered Spring Boot jar on a JRE 17, non-root, health-checked
#   fhir         the HAPI FHIR JPA server image with Lungflag's JDK-only health probe added (the image is
#                distroless: no shell, curl or wget for a health check)
#   demo-loader  the sandbox executable, for the one-shot demo scenario loader (compose profile "demo")
# Every base image is pinned by tag; change them here only (ComposeFileTest checks they stay pinned).
ARG JDK_IMAGE=eclipse-temurin:17.0.15_6-jdk-jammy
ARG JRE_IMAGE=eclipse-temurin:17.0.15_6-jre-jammy
ARG FHIR_IMAGE=hapiproject/hapi:v8.8.0-1

# --- build the service and the sandbox executable from source ----------------------------------------------
FROM ${JDK_IMAGE} AS build
WORKDIR /src
COPY .mvn/ .mvn/
COPY mvnw pom.xml ./
COPY rules/ rules/
COPY fhir-profiles/ fhir-profiles/
COPY sandbox/ sandbox/
COPY service/ service/
RUN --mount=type=cache,target=/root/.m2 \
    ./mvnw -B -q -pl service,sandbox -am package -DskipTests -Dspotless.check.skip=true

# --- split the Boot jar into layers (dependencies change rarely, the application often) ------------------
FROM ${JDK_IMAGE} AS extract
WORKDIR /extract
COPY --from=build /src/service/target/lungflag-service.jar lungflag-service.jar
RUN java -Djarmode=tools -jar lungflag-service.jar extract --layers --destination layers \
 && mkdir probe && cd probe \
 && jar xf ../layers/application/lungflag-service.jar org/lungflag/service/deploy/HttpProbe.class

# --- the Lungflag service ----------------------------------------------------------------------------------
FROM ${JRE_IMAGE} AS service
RUN groupadd --system --gid 10001 lungflag \
 && useradd --system --uid 10001 --gid lungflag --home-dir /app --shell /usr/sbin/nologin lungflag
WORKDIR /app
COPY --from=extract /extract/layers/dependencies/ ./
COPY --from=extract /extract/layers/spring-boot-loader/ ./
COPY --from=extract /extract/layers/snapshot-dependencies/ ./
COPY --from=extract /extract/layers/application/ ./
# ./data is the embedded H2 default's folder; with PostgreSQL (LUNGFLAG_DB_URL) nothing is written there.
RUN mkdir -p /app/data && chown lungflag:lungflag /app/data
USER 10001:10001
ENV JAVA_TOOL_OPTIONS="-XX:MaxRAMPercentage=75"
EXPOSE 8080
# Readiness = started and the audit database answers; the FHIR server's state is reported by /actuator/health
# but does not make an instance unhealthy (it would take every instance out of the load balancer at once).
HEALTHCHECK --interval=15s --timeout=6s --start-period=120s --retries=4 \
  CMD ["java", "-Xmx16m", "-XX:TieredStopAtLevel=1", "-cp", "/app/lungflag-service.jar", \
       "org.lungflag.service.deploy.HttpProbe", "http://127.0.0.1:8080/actuator/health/readiness", "5"]
ENTRYPOINT ["java", "-jar", "/app/lungflag-service.jar"]

# --- the FHIR server, with a health probe ------------------------------------------------------------------
FROM ${FHIR_IMAGE} AS fhir
COPY --from=extract /extract/probe/ /opt/lungflag-probe/
HEALTHCHECK --interval=15s --timeout=6s --start-period=180s --retries=6 \
  CMD ["java", "-Xmx16m", "-XX:TieredStopAtLevel=1", "-cp", "/opt/lungflag-probe", \
       "org.lungflag.service.deploy.HttpProbe", "http://127.0.0.1:8080/actuator/health", "5"]

# --- the demo scenario loader: the sandbox executable, whose "play" posts the invented scenario -------------
FROM ${JRE_IMAGE} AS demo-loader
RUN groupadd --system --gid 10001 lungflag \
 && useradd --system --uid 10001 --gid lungflag --home-dir /app --shell /usr/sbin/nologin lungflag
WORKDIR /app
COPY --from=build /src/sandbox/target/lungflag-sandbox-exec.jar sandbox/target/lungflag-sandbox-exec.jar
USER 10001:10001
ENTRYPOINT ["java", "-jar", "sandbox/target/lungflag-sandbox-exec.jar"]
CMD ["help"]
