// showops: small helpers shared by every page (no inline scripts: the pages' CSP forbids them).
"use strict";
window.showops = (function () {
  function csrfToken() {
    var meta = document.querySelector('meta[name="csrf-token"]');
    return meta ? meta.getAttribute("content") : "";
  }
  // Call the JSON API the way every page does: same-origin cookies, the CSRF header,
  // and one error shape {"error": {"status", "message"}} turned into an Error.
  function api(method, path, body) {
    var options = { method: method, credentials: "same-origin", headers: { "Accept": "application/json" } };
    if (body !== undefined) {
      options.headers["Content-Type"] = "application/json";
      options.body = JSON.stringify(body);
    }
    if (method !== "GET") { options.headers["X-CSRFToken"] = csrfToken(); }
    return fetch(path, options).then(function (response) {
      return response.json().catch(function () { return {}; }).then(function (data) {
        if (!response.ok) {
          var err = new Error((data.error && data.error.message) || ("HTTP " + response.status));
          err.status = response.status;
          throw err;
        }
        return data;
      });
    });
  }
  return { api: api, csrfToken: csrfToken };
})();
