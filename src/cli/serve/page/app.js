// The page of `relyard serve`. Every text from an upload is put in with textContent, never
// as markup.
"use strict";
(function () {
  const $ = (id) => document.getElementById(id);
  let useDemo = false;

  function fmt(x, digits) {
    return typeof x === "number" && isFinite(x) ? x.toFixed(digits) : "—";
  }
  function interval(pair, digits) {
    return Array.isArray(pair) ? fmt(pair[0], digits) + " to " + fmt(pair[1], digits) : "not available";
  }
  function show(doc) {
    const r = doc.reliability || {};
    $("problems").textContent = "";
    $("result").hidden = false;
    $("r-estimate").textContent = fmt(r.estimate, 3);
    $("r-ci").textContent = interval(r.ci, 3);
    $("r-pi").textContent = interval(r.pi, 3);
    $("r-k").textContent = String(doc.k);
    $("r-tau2").textContent = fmt(doc.tau2, 4);
    $("r-i2").textContent = fmt(doc.i2, 1) + "%";
    $("headline").textContent = Array.isArray(r.pi)
      ? "A new study of this measure should expect a coefficient between " + fmt(r.pi[0], 2) + " and " + fmt(r.pi[1], 2) + "."
      : "The pooled coefficient is " + fmt(r.estimate, 2) + ".";
    const figures = doc.figures || {};
    showImage("forest", figures.forest);
    showImage("precision", figures.precision);
    $("paragraph").textContent = doc.paragraph || "";
    $("caution").textContent = doc.caution || "";
    listWarnings("warnings", doc.warnings);
  }
  // The sheet and model settings the benchmark step shows, as query parameters; null
  // (with a message in `problems`) when no sheet is chosen.
  function sheetRequest(problems) {
    const file = $("sheet").files[0];
    if (!useDemo && !file) {
      $(problems).textContent = "Choose a coding sheet, or use the invented demo sheet.";
      return null;
    }
    const params = new URLSearchParams();
    params.set("tau2", $("tau2").value);
    params.set("ci", $("ci").value);
    params.set("level", $("level").value);
    for (const id of ["transform", "dependence"]) {
      if ($(id).value) params.set(id, $(id).value);
    }
    if ($("worksheet").value.trim()) params.set("worksheet", $("worksheet").value.trim());
    if ($("skip-invalid").checked) params.set("skip_invalid", "1");
    if (useDemo) {
      params.set("demo", "1");
      return { params: params, body: null, label: "the invented demo sheet" };
    }
    params.set("name", file.name);
    return { params: params, body: file, label: file.name };
  }
  function showImage(id, svg) {
    const img = $(id);
    img.hidden = !svg;
    if (svg) img.src = "data:image/svg+xml;charset=utf-8," + encodeURIComponent(svg);
  }
  function listWarnings(id, warnings) {
    const list = $(id);
    list.textContent = "";
    for (const w of warnings || []) {
      const li = document.createElement("li");
      li.textContent = w.message;
      list.appendChild(li);
    }
  }
  // Post a request to the server: the answer's document, or null with the problem shown
  // (and the old result hidden).
  async function send(path, request, status, problems, result, busy) {
    $(status).textContent = busy;
    $(problems).textContent = "";
    try {
      const response = await fetch(path + "?" + request.params.toString(), { method: "POST", body: request.body });
      const doc = await response.json();
      $(status).textContent = "";
      if (response.ok) return doc;
      $(result).hidden = true;
      $(problems).textContent = doc.error || "The request failed.";
    } catch (e) {
      $(status).textContent = "";
      $(problems).textContent = "The server did not answer: " + e;
    }
    return null;
  }
  async function place() {
    const request = sheetRequest("check-problems");
    if (!request) return;
    const p = request.params;
    p.set("coef", $("s-coef").value);
    p.set("n", $("s-n").value);
    if ($("s-items").value) p.set("items", $("s-items").value);
    p.set("coef_type", $("s-type").value);
    const doc = await send("/api/check", request, "check-status", "check-problems", "check-result", "Placing your study…");
    if (!doc) return;
    $("check-result").hidden = false;
    // The verdict is one of below, within or above.
    $("verdict").textContent = "Your coefficient of " + fmt(doc.coef, 2) + " lies " + doc.verdict +
      " the range expected for a study like yours (" + interval(doc.pi_observed, 2) + ").";
    $("c-coef").textContent = fmt(doc.coef, 3);
    $("c-expected").textContent = fmt(doc.expected, 3);
    $("c-range").textContent = interval(doc.pi_observed, 3);
    $("c-percentile").textContent = fmt(doc.percentile, 0);
    showImage("placement", (doc.figures || {}).placement);
    $("check-paragraph").textContent = doc.paragraph || "";
    listWarnings("check-warnings", doc.warnings);
  }
  async function pool() {
    const request = sheetRequest("problems");
    if (!request) return;
    const doc = await send("/api/pool", request, "status", "problems", "result", "Pooling…");
    if (!doc) return;
    $("status").textContent = "Pooled " + request.label + ".";
    show(doc);
  }
  document.addEventListener("DOMContentLoaded", async function () {
    $("pool-form").addEventListener("submit", function (e) { e.preventDefault(); pool(); });
    $("check-form").addEventListener("submit", function (e) { e.preventDefault(); place(); });
    $("sheet").addEventListener("change", function () { useDemo = false; });
    $("use-demo").addEventListener("click", function () { useDemo = true; $("sheet").value = ""; pool(); });
    $("copy").addEventListener("click", async function () {
      try {
        await navigator.clipboard.writeText($("paragraph").textContent);
        $("status").textContent = "Paragraph copied.";
      } catch (e) {
        $("status").textContent = "Copying was refused by the browser; select the paragraph and copy it.";
      }
    });
    try {
      const start = await (await fetch("/api/start")).json();
      $("version").textContent = "relyard " + start.version;
      if (start.demo) { useDemo = true; pool(); }
    } catch (e) { /* the page still works without it */ }
  });
})();
