package org.lungflag.service.api;

import io.swagger.v3.oas.models.Components;
import io.swagger.v3.oas.models.OpenAPI;
import io.swagger.v3.oas.models.info.Info;
import io.swagger.v3.oas.models.info.License;
import io.swagger.v3.oas.models.security.SecurityRequirement;
import io.swagger.v3.oas.models.security.SecurityScheme;
import java.util.List;
import org.springframework.context.annotation.Bean;
import org.springframework.context.annotation.Configuration;
import org.springframework.http.converter.HttpMessageConverter;
import org.springframework.web.servlet.config.annotation.WebMvcConfigurer;

/** CSV for lists, and the OpenAPI document's header (springdoc builds the paths from the controllers). */
@Configuration(proxyBeanMethods = false)
class ApiConfiguration implements WebMvcConfigurer {

    @Override
    public void extendMessageConverters(List<HttpMessageConverter<?>> converters) {
        converters.add(new CsvMessageConverter());
    }

    @Bean
    OpenAPI lungflagOpenApi() {
        return new OpenAPI()
                .info(new Info()
                        .title("Lungflag audit API")
                        .version("v1")
                        .description("Advisories and their explanations, evaluations, quarantine, the rule and index"
                                + " catalogs, statistics and intake health. Lists answer CSV with ?format=csv."
                                + " Advisory only: every advisory carries its caution; confirm at the bedside and"
                                + " follow local protocols.")
                        .license(new License().name("Apache-2.0")))
                .components(new Components()
                        .addSecuritySchemes(
                                "basic",
                                new SecurityScheme()
                                        .type(SecurityScheme.Type.HTTP)
                                        .scheme("basic"))
                        .addSecuritySchemes(
                                "bearer",
                                new SecurityScheme()
                                        .type(SecurityScheme.Type.HTTP)
                                        .scheme("bearer")
                                        .bearerFormat("JWT")))
                .addSecurityItem(new SecurityRequirement().addList("basic"))
                .addSecurityItem(new SecurityRequirement().addList("bearer"));
    }
}
