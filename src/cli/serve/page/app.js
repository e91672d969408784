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
    for (const id of ["forest", "precision"]) {
      const svg = figures[id];
      const img = $(id);
      img.hidden = !svg;
      if (svg) img.src = "data:image/svg+xml;charset=utf-8," + encodeURIComponent(svg);
    }
    $("paragraph").textContent = doc.paragraph || "";
    $("caution").textContent = doc.caution || "";
    const list = $("warnings");
    list.textContent = "";
    for (const w of doc.warnings || []) {
      const li = document.createElement("li");
      li.textContent = w.message;
      list.appendChild(li);
    }
  }
  async function pool() {
    const file = $("sheet").files[0];
    if (!useDemo && !file) {
      $("problems").textContent = "Choose a coding sheet, or use the invented demo sheet.";
      return;
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
    let body = null;
    if (useDemo) {
      params.set("demo", "1");
    } else {
      params.set("name", file.name);
      body = file;
    }
    $("status").textContent = "Pooling…";
    try {
      const response = await fetch("/api/pool?" + params.toString(), { method: "POST", body: body });
      const doc = await response.json();
      $("status").textContent = "";
      if (!response.ok) {
        $("result").hidden = true;
        $("problems").textContent = doc.error || "The request failed.";
        return;
      }
      $("status").textContent = "Pooled " + (useDemo ? "the invented demo sheet" : file.name) + ".";
      show(doc);
    } catch (e) {
      $("status").textContent = "";
      $("problems").textContent = "The server did not answer: " + e;
    }
  }
  document.addEventListener("DOMContentLoaded", async function () {
    $("pool-form").addEventListener("submit", function (e) { e.preventDefault(); pool(); });
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
