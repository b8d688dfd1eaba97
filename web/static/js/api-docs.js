// Interactive API documentation from the vendored Swagger UI files (no CDN, works offline).
window.addEventListener("DOMContentLoaded", () => {
  window.SwaggerUIBundle({
    url: document.getElementById("swagger-ui").dataset.openapi,
    dom_id: "#swagger-ui",
    deepLinking: true,
    presets: [window.SwaggerUIBundle.presets.apis],
    layout: "BaseLayout",
  });
});
