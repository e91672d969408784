// The page of `relyard serve`. Every text from an upload is put in with textContent, never
// as markup.
"use strict";
(function () {
  const $ = (id) => document.getElementById(id);
  // The standard columns of a coding sheet, in the template's order.
  const ROLES = ["study", "sample", "cluster", "coef", "n", "items", "coef_type", "sd", "sd_metric", "scale_min", "scale_max", "var"];
  let useDemo = false;
  let useDemoItems = false;
  // The sheet's columns as the last pooling read them, and the mapping the page asks for.
  let columns = null;
  let mapping = {};
  // The last item analysis, for carrying its coefficient into Your study.
  let lastItems = null;

  function fmt(x, digits) {
    return typeof x === "number" && isFinite(x) ? x.toFixed(digits) : "—";
  }
  function interval(pair, digits) {
    return Array.isArray(pair) ? fmt(pair[0], digits) + " to " + fmt(pair[1], digits) : "not available";
  }
  function pvalue(p) {
    if (typeof p !== "number" || !isFinite(p)) return "—";
    return p < 0.001 ? "< 0.001" : p.toFixed(3);
  }
  function element(tag, text) {
    const e = document.createElement(tag);
    if (text !== undefined) e.textContent = text;
    return e;
  }
  function row(cells, header) {
    const tr = element("tr");
    cells.forEach(function (c, i) { tr.appendChild(element(i === 0 && header ? "th" : "td", c)); });
    if (header) tr.firstChild.scope = "row";
    return tr;
  }
  function showImage(id, svg) {
    const img = $(id);
    img.hidden = !svg;
    if (svg) img.src = "data:image/svg+xml;charset=utf-8," + encodeURIComponent(svg);
  }
  function listWarnings(id, warnings) {
    const list = $(id);
    list.textContent = "";
    for (const w of warnings || []) list.appendChild(element("li", w.message));
  }

  // The sheet and model settings the benchmark step shows, as query parameters; null
  // (with a message in `problems`) when no sheet is chosen.
  function sheetRequest(problems) {
    const file = $("sheet").files[0];
    if (!useDemo && !file) {
      $(problems).textContent = "Choose a coding sheet under Benchmark, or use the invented demo sheet.";
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
    for (const role of Object.keys(mapping)) params.append("column", role + "=" + mapping[role]);
    if (useDemo) {
      params.set("demo", "1");
      return { params: params, body: null, label: "the invented demo sheet" };
    }
    params.set("name", file.name);
    return { params: params, body: file, label: file.name };
  }

  // The moderators chosen under Explain, as query parameters.
  function addModerators(params) {
    for (const box of document.querySelectorAll("#moderators input[data-moderator]")) {
      if (!box.checked) continue;
      const name = box.dataset.moderator;
      params.append("moderator", name);
      const cat = document.querySelector('#moderators input[data-categorical="' + CSS.escape(name) + '"]');
      if (cat && cat.checked && !cat.disabled) params.append("categorical", name);
      const ref = document.querySelector('#moderators select[data-reference="' + CSS.escape(name) + '"]');
      if (ref && ref.value && (cat === null || cat.checked)) params.append("reference", name + "=" + ref.value);
    }
  }
  function chosenModerators() {
    return Array.from(document.querySelectorAll("#moderators input[data-moderator]"))
      .filter(function (b) { return b.checked; })
      .map(function (b) { return b.dataset.moderator; });
  }

  // Post a request to the server: the answer's document (or, with `blob`, its bytes), or
  // null with the problem shown (and the old result hidden).
  async function send(path, request, ids, busy, blob, signal) {
    $(ids.status).textContent = busy;
    $(ids.problems).textContent = "";
    try {
      const response = await fetch(path + "?" + request.params.toString(), { method: "POST", body: request.body, signal: signal });
      $(ids.status).textContent = "";
      if (response.ok) return blob ? await response.blob() : await response.json();
      // Most refusals are a JSON document with its error; some (a refused session, an
      // upload over the limit) are plain text.
      const text = await response.text();
      let message = text;
      try { message = JSON.parse(text).error || text; } catch (e) { /* plain text */ }
      if (ids.result) $(ids.result).hidden = true;
      $(ids.problems).textContent = message || "The request failed.";
    } catch (e) {
      $(ids.status).textContent = "";
      $(ids.problems).textContent = e.name === "AbortError" ? "Stopped." : "The server did not answer: " + e;
    }
    return null;
  }

  // ---------------------------------------------------------------- Benchmark
  function showBenchmark(doc) {
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
    const skipped = doc.skipped_rows || [];
    $("skipped-box").hidden = skipped.length === 0;
    $("skipped").textContent = "";
    for (const s of skipped) $("skipped").appendChild(element("li", "row " + s.row + ": " + (s.reasons || []).join("; ")));
    if (doc.columns) showColumns(doc.columns);
    const sheets = doc.worksheets || [];
    const list = $("worksheets");
    list.textContent = "";
    for (const w of sheets) list.appendChild(new Option(w, w));
    $("worksheet-note").textContent = sheets.length > 1
      ? "This workbook's worksheets: " + sheets.join(", ") + "; read: " + (doc.input.sheet_name || sheets[0]) + "."
      : "";
  }
  function headers(cols) {
    const all = Object.values(cols.roles);
    for (const o of cols.others) all.push(o.name);
    return all;
  }
  function showColumns(cols) {
    columns = cols;
    const body = $("mapping-body");
    body.textContent = "";
    const names = headers(cols);
    for (const role of ROLES) {
      const tr = element("tr");
      const th = element("th", role);
      th.scope = "row";
      tr.appendChild(th);
      const td = element("td");
      const select = element("select");
      select.id = "map-" + role;
      select.dataset.role = role;
      select.setAttribute("aria-label", "Column read as " + role);
      select.appendChild(new Option("— (not in the sheet)", ""));
      for (const h of names) select.appendChild(new Option(h, h));
      select.value = cols.roles[role] || "";
      select.dataset.current = select.value;
      td.appendChild(select);
      tr.appendChild(td);
      body.appendChild(tr);
    }
    showModeratorChoices(cols);
  }
  function remap() {
    for (const select of document.querySelectorAll("#mapping-body select")) {
      if (select.value && select.value !== select.dataset.current) mapping[select.dataset.role] = select.value;
    }
    pool();
  }
  async function pool() {
    const request = sheetRequest("problems");
    if (!request) return;
    const doc = await send("/api/pool", request, { status: "status", problems: "problems", result: "result" }, "Pooling…");
    if (!doc) return;
    $("status").textContent = "Pooled " + request.label + ".";
    showBenchmark(doc);
  }

  // ---------------------------------------------------------------- Explain
  function showModeratorChoices(cols) {
    const box = $("moderators");
    const keep = new Set(chosenModerators());
    box.textContent = "";
    $("moderators-hint").textContent = cols.others.length
      ? "Columns of the sheet that may explain why its coefficients differ."
      : "The sheet has no columns besides the standard ones.";
    const by = $("e-by");
    const byValue = by.value;
    by.textContent = "";
    by.appendChild(new Option("no subgroups", ""));
    cols.others.forEach(function (o, i) {
      const line = element("div");
      line.className = "moderator";
      const use = element("input");
      use.type = "checkbox";
      use.id = "mod-" + i;
      use.dataset.moderator = o.name;
      use.checked = keep.has(o.name);
      const label = element("label", o.name + (o.numeric ? " (numbers)" : " (categories)"));
      label.htmlFor = use.id;
      line.appendChild(use);
      line.appendChild(label);
      const cat = element("input");
      cat.type = "checkbox";
      cat.id = "cat-" + i;
      cat.dataset.categorical = o.name;
      cat.checked = !o.numeric;
      cat.disabled = !o.numeric;
      const catLabel = element("label", "as categories");
      catLabel.htmlFor = cat.id;
      line.appendChild(cat);
      line.appendChild(catLabel);
      if (o.levels.length) {
        const ref = element("select");
        ref.id = "ref-" + i;
        ref.dataset.reference = o.name;
        ref.appendChild(new Option("reference: the largest group", ""));
        for (const l of o.levels) ref.appendChild(new Option("reference: " + l, l));
        ref.setAttribute("aria-label", "Reference level of " + o.name);
        line.appendChild(ref);
      }
      // A reference level means something only for a moderator taken as categories.
      const showReference = function () {
        const ref = line.querySelector("select");
        if (ref) ref.hidden = !cat.checked;
      };
      use.addEventListener("change", showAtFields);
      cat.addEventListener("change", function () { showReference(); showAtFields(); });
      showReference();
      box.appendChild(line);
      if (o.levels.length) by.appendChild(new Option(o.name, o.name));
    });
    by.value = byValue;
    showAtFields();
  }
  let explainJob = null;
  let explainAbort = null;
  async function watch(job) {
    while (explainJob === job) {
      try {
        const r = await fetch("/api/progress?job=" + job);
        if (r.ok) {
          const p = await r.json();
          if (p.total > 0) {
            $("explain-progress").max = p.total;
            $("explain-progress").value = p.done;
            $("explain-progress-label").textContent = (p.task || "working") + ": " + p.done + " of " + p.total;
          }
        }
      } catch (e) { /* the next poll tries again */ }
      await new Promise(function (done) { setTimeout(done, 300); });
    }
  }
  async function explain() {
    const request = sheetRequest("explain-problems");
    if (!request) return;
    const p = request.params;
    addModerators(p);
    if ($("e-by").value) p.set("by", $("e-by").value);
    const perms = parseInt($("e-permutations").value, 10);
    if (perms > 0) p.set("permutations", String(perms));
    if ($("e-spread").checked) p.set("score_spread", "1");
    if ($("e-influence").checked) p.set("influence", "1");
    const job = "explain-" + Date.now().toString(36) + "-" + Math.floor(Math.random() * 1e9).toString(36);
    p.set("job", job);
    explainJob = job;
    explainAbort = new AbortController();
    $("explain").disabled = true;
    $("explain-progress").removeAttribute("value");
    $("explain-progress-label").textContent = "Working…";
    $("explain-running").hidden = false;
    watch(job);
    const doc = await send("/api/explain", request, { status: "explain-status", problems: "explain-problems", result: "explain-result" }, "Explaining…", false, explainAbort.signal);
    explainJob = null;
    explainAbort = null;
    $("explain").disabled = false;
    $("explain-running").hidden = true;
    if (!doc) return;
    showExplanation(doc);
  }
  // Stop a running explanation: the server is asked to stop it, and the page stops waiting
  // (which also stops it, should the request not have reached the server yet).
  async function stopExplain() {
    if (!explainJob) return;
    $("explain-progress-label").textContent = "Stopping…";
    try { await fetch("/api/stop?job=" + explainJob, { method: "POST" }); } catch (e) { /* aborted below */ }
    if (explainAbort) explainAbort.abort();
  }
  function showExplanation(doc) {
    $("explain-result").hidden = false;
    const terms = $("coefficients");
    terms.textContent = "";
    for (const c of doc.coefficients || []) {
      // The interval and p of the inference in force (cluster-robust when clusters exist).
      terms.appendChild(row([c.name, fmt(c.estimate, 4), interval(c.ci, 4), pvalue(c.p), pvalue(c.permutation_p)], true));
    }
    const omnibus = doc.omnibus;
    $("explain-headline").textContent = (doc.moderators || []).length
      ? "The moderators account for " + fmt(doc.r2, 1) + "% of the between-study variance" +
        (omnibus ? " (test of all moderators: p " + pvalue(omnibus.p) + ")." : ".")
      : "No moderator was chosen.";
    const g = doc.subgroups;
    $("subgroups-box").hidden = !g;
    $("subgroups").textContent = "";
    if (g) {
      for (const s of g.groups || []) {
        const rel = s.reliability || {};
        const pooled = s.note ? s.note : fmt(rel.estimate, 3);
        $("subgroups").appendChild(row([String(s.level), String(s.k), pooled, s.note ? "" : interval(rel.ci, 3)], true));
      }
      if (g.q_between) {
        $("subgroups").appendChild(row(["Difference between the groups", "", "Q = " + fmt(g.q_between.statistic, 2) + ", df " + g.q_between.df, "p " + pvalue(g.q_between.p)], true));
      }
    }
    const inf = doc.influence;
    $("influence-box").hidden = !inf;
    $("influence").textContent = "";
    if (inf) {
      const flagged = inf.filter(function (s) { return s.influential || s.outlier; });
      if (flagged.length === 0) $("influence").appendChild(element("li", "No study stands out."));
      for (const s of flagged) {
        const why = [s.outlier ? "an outlier" : "", s.influential ? "influential" : ""].filter(Boolean).join(" and ");
        $("influence").appendChild(element("li", s.study + " (row " + s.row + "): " + why));
      }
    }
    const figs = $("explain-figures");
    figs.textContent = "";
    for (const f of doc.figures || []) {
      const fig = element("figure");
      const img = element("img");
      img.alt = f.description || f.title;
      img.src = "data:image/svg+xml;charset=utf-8," + encodeURIComponent(f.svg);
      fig.appendChild(img);
      fig.appendChild(element("figcaption", f.title));
      figs.appendChild(fig);
    }
    listWarnings("explain-warnings", doc.warnings);
  }

  // ---------------------------------------------------------------- Your items
  async function items() {
    const file = $("item-file").files[0];
    if (!useDemoItems && !file) {
      $("items-problems").textContent = "Choose an item file, or use the invented demo item data.";
      return;
    }
    const params = new URLSearchParams();
    if ($("i-items").value.trim()) params.set("items", $("i-items").value.trim());
    if ($("i-reverse").value.trim()) params.set("reverse", $("i-reverse").value.trim());
    if ($("i-min").value) params.set("scale_min", $("i-min").value);
    if ($("i-max").value) params.set("scale_max", $("i-max").value);
    if ($("i-ordinal").checked) params.set("ordinal", "1");
    let body = null;
    if (useDemoItems) params.set("demo", "1");
    else { params.set("name", file.name); body = file; }
    const doc = await send("/api/items", { params: params, body: body }, { status: "items-status", problems: "items-problems", result: "items-result" }, "Computing…");
    if (!doc) return;
    lastItems = doc;
    $("items-result").hidden = false;
    const reading = doc.reading || "";
    $("items-reading").textContent = reading.charAt(0).toUpperCase() + reading.slice(1);
    $("i-n").textContent = String(doc.n_used);
    $("i-k").textContent = String(doc.items);
    $("i-alpha").textContent = fmt(doc.alpha, 3) + " (" + interval(doc.alpha_ci_feldt, 3) + ")";
    $("i-omega").textContent = fmt(doc.omega, 3);
    const glb = doc.glb || {};
    $("i-glb").textContent = typeof glb.value === "number"
      ? fmt(glb.value, 3) + (glb.small_sample ? " (biased upward below about 1,000 respondents)" : "")
      : "not available: " + (glb.note || "");
    $("i-glb-caution").hidden = typeof glb.value !== "number";
    $("i-glb-caution").textContent = glb.caution || "";
    $("i-paragraph").textContent = doc.paragraph || "";
    const t = doc.tau_equivalence;
    $("i-tau").textContent = t ? "χ² = " + fmt(t.chi2, 1) + ", df " + t.df + ", p " + pvalue(t.p) : "not tested";
    $("i-sd").textContent = doc.score ? fmt(doc.score.sum_sd, 2) : "—";
    const ord = doc.ordinal;
    $("i-ordinal-row").hidden = !ord;
    $("i-categorical-row").hidden = !ord;
    $("i-ordinal-caution").hidden = !ord;
    if (ord) {
      $("i-ordinal-alpha").textContent = typeof ord.alpha === "number" ? fmt(ord.alpha, 3) : "not available: " + (ord.note || "");
      $("i-categorical").textContent = typeof ord.omega === "number" ? fmt(ord.omega, 3) : "not available: " + (ord.omega_note || ord.note || "");
      $("i-ordinal-caution").textContent = ord.caution || "";
    }
    const carried = carriedCoefficient(doc);
    $("carry").disabled = !carried;
    $("carry").textContent = carried ? "Carry " + carried.kind + " = " + fmt(carried.value, 3) + " into Your study" : "Nothing to carry until the reading above is dealt with";
    listWarnings("items-warnings", doc.warnings);
  }
  // The coefficient the item analysis says to report, if it says one.
  function carriedCoefficient(doc) {
    switch (doc.recommendation) {
      // One factor does not describe the items (check_dimensionality), they need
      // reverse-keying first, or share no variance: nothing to carry.
      case "omega":
        return typeof doc.omega === "number" ? { kind: "omega", value: doc.omega } : null;
      case "either":
      case "alpha_only":
      case "alpha_with_caution":
        return typeof doc.alpha === "number" ? { kind: "alpha", value: doc.alpha } : null;
      default:
        return null;
    }
  }
  function carry() {
    const c = lastItems && carriedCoefficient(lastItems);
    if (!c) return;
    $("s-coef").value = c.value.toFixed(3);
    $("s-n").value = String(lastItems.n_used);
    $("s-items").value = String(lastItems.items);
    $("s-type").value = c.kind;
    if (lastItems.score) { $("s-sd").value = lastItems.score.sum_sd.toFixed(3); $("s-sd-metric").value = "sum"; }
    $("s-scale-min").value = $("i-min").value;
    $("s-scale-max").value = $("i-max").value;
    $("items-status").textContent = "Carried into Your study.";
    $("study-heading").scrollIntoView();
  }

  // ---------------------------------------------------------------- Retest and raters
  async function icc() {
    const file = $("icc-file").files[0];
    if (!file) {
      $("icc-problems").textContent = "Choose a table of scores.";
      return;
    }
    const params = new URLSearchParams();
    if ($("icc-columns").value.trim()) params.set("columns", $("icc-columns").value.trim());
    params.set("name", file.name);
    const doc = await send("/api/icc", { params: params, body: file }, { status: "icc-status", problems: "icc-problems", result: "icc-result" }, "Computing…");
    if (!doc) return;
    $("icc-result").hidden = false;
    $("icc-headline").textContent = doc.n + " rows (persons or targets) × " + doc.k + " columns (occasions or raters)" +
      (doc.rows_left_out ? "; " + doc.rows_left_out + " rows with a missing cell left out." : ".");
    const body = $("icc-forms");
    body.textContent = "";
    for (const f of doc.forms || []) body.appendChild(row([f.model, f.type, f.unit, fmt(f.value, 3), interval(f.ci, 3), pvalue(f.p)], true));
    $("icc-sem").textContent = "Standard error of measurement " + fmt(doc.sem, 3) + " (" + doc.sem_form + "); smallest detectable change " + fmt(doc.sdc, 3) + ".";
    $("icc-retest").textContent = (doc.guidance || {}).test_retest || "";
    $("icc-raters").textContent = (doc.guidance || {}).raters || "";
    $("icc-caution").textContent = doc.caution || "";
    listWarnings("icc-warnings", doc.warnings);
  }

  // ---------------------------------------------------------------- Your study
  function showAtFields() {
    const box = $("at-fields");
    const chosen = chosenModerators();
    const old = {};
    for (const input of box.querySelectorAll("[data-at]")) old[input.dataset.at] = input.value;
    box.textContent = "";
    $("at-box").hidden = chosen.length === 0;
    chosen.forEach(function (name, i) {
      const info = ((columns && columns.others) || []).find(function (o) { return o.name === name; }) || { numeric: true, levels: [] };
      const cat = document.querySelector('#moderators input[data-categorical="' + CSS.escape(name) + '"]');
      const categorical = cat ? cat.checked : !info.numeric;
      const field = element("div");
      field.className = "field";
      const label = element("label", name);
      label.htmlFor = "at-" + i;
      let input;
      if (categorical && info.levels.length) {
        input = element("select");
        for (const l of info.levels) input.appendChild(new Option(l, l));
      } else {
        input = element("input");
        input.type = categorical ? "text" : "number";
        input.step = "any";
      }
      input.id = "at-" + i;
      input.dataset.at = name;
      if (old[name] !== undefined) input.value = old[name];
      field.appendChild(label);
      field.appendChild(input);
      box.appendChild(field);
    });
  }
  function studyParams(p) {
    p.set("coef", $("s-coef").value);
    p.set("n", $("s-n").value);
    if ($("s-items").value) p.set("items", $("s-items").value);
    p.set("coef_type", $("s-type").value);
    if ($("s-sd").value) { p.set("sd", $("s-sd").value); p.set("sd_metric", $("s-sd-metric").value); }
    if ($("s-scale-min").value) p.set("scale_min", $("s-scale-min").value);
    if ($("s-scale-max").value) p.set("scale_max", $("s-scale-max").value);
    if ($("s-cluster").value.trim()) p.set("in_cluster", $("s-cluster").value.trim());
    addModerators(p);
    addAt(p);
  }
  function addAt(p) {
    for (const input of document.querySelectorAll("#at-fields [data-at]")) {
      if (input.value !== "") p.append("at", input.dataset.at + "=" + input.value);
    }
  }
  async function place() {
    const request = sheetRequest("check-problems");
    if (!request) return;
    studyParams(request.params);
    const doc = await send("/api/check", request, { status: "check-status", problems: "check-problems", result: "check-result" }, "Placing your study…");
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

  // ---------------------------------------------------------------- Correction
  let useDemoStudy = false;
  function correctionCase() {
    const regression = $("k-case").value === "regression";
    $("k-correlation").hidden = regression;
    $("k-regression").hidden = !regression;
  }
  async function correct() {
    if ($("k-case").value === "regression") return correctRegression();
    const withBenchmark = $("k-x-source").value === "benchmark";
    let request;
    if (withBenchmark) {
      request = sheetRequest("correct-problems");
      if (!request) return;
      addModerators(request.params);
      addAt(request.params);
    } else {
      if (!$("k-x").value.trim()) {
        $("correct-problems").textContent = "Give the reliability of the measure (x), or choose the benchmark.";
        return;
      }
      request = { params: new URLSearchParams(), body: null };
      request.params.set("rel_x", $("k-x").value.trim());
    }
    const p = request.params;
    p.set("r", $("k-r").value);
    p.set("n", $("k-n").value);
    p.set("rel_y", $("k-y").value.trim());
    const path = withBenchmark ? "/api/correct-with-benchmark" : "/api/correct";
    const doc = await send(path, request, { status: "correct-status", problems: "correct-problems", result: "correct-result" }, "Correcting…");
    if (!doc) return;
    $("correct-result").hidden = false;
    $("k-table").hidden = false;
    $("g-table").hidden = true;
    $("correct-headline").textContent = "Corrected for the unreliability of both scores, the correlation of " + fmt(doc.observed, 2) +
      " becomes " + fmt(doc.corrected, 2) + " (" + interval(doc.ci, 2) + ").";
    $("k-observed").textContent = fmt(doc.observed, 3);
    $("k-corrected").textContent = fmt(doc.corrected, 3);
    $("k-ci").textContent = interval(doc.ci, 3);
    showCorrectionCommon(doc);
  }
  function showCorrectionCommon(doc) {
    $("k-rels").textContent = "Reliabilities used: " + (doc.reliabilities || []).map(function (r) { return r.variable + ": " + r.description; }).join("; ") + ".";
    const svg = (doc.figures || {}).sensitivity;
    $("sensitivity-figure").hidden = !svg;
    showImage("sensitivity", svg);
    listWarnings("correct-warnings", doc.warnings);
  }
  async function correctRegression() {
    const file = $("g-file").files[0];
    if (!useDemoStudy && !file) {
      $("correct-problems").textContent = "Choose your study's data, or use the invented demo study.";
      return;
    }
    const params = new URLSearchParams();
    params.set("source", $("g-source").value);
    if ($("g-source").value === "summary" && $("g-n").value) params.set("n", $("g-n").value);
    params.set("outcome", $("g-outcome").value.trim());
    for (const name of $("g-predictors").value.split(",")) {
      if (name.trim()) params.append("predictor", name.trim());
    }
    for (const line of $("g-rels").value.split("\n")) {
      if (line.trim()) params.append("rel", line.trim());
    }
    let body = null;
    if (useDemoStudy) params.set("demo", "1");
    else { params.set("name", file.name); body = file; }
    const doc = await send("/api/correct-regression", { params: params, body: body }, { status: "correct-status", problems: "correct-problems", result: "correct-result" }, "Correcting…");
    if (!doc) return;
    $("correct-result").hidden = false;
    $("k-table").hidden = true;
    $("g-table").hidden = false;
    const r2 = doc.r2 || {};
    const percent = function (x) { return typeof x === "number" ? fmt(100 * x, 1) + "%" : "—"; };
    $("correct-headline").textContent = typeof r2.corrected === "number"
      ? "Corrected for unreliability, the predictors account for " + percent(r2.corrected) +
        " of the variance of " + doc.outcome + " (observed: " + percent(r2.observed) + ")."
      : "The corrected regression is not available" + (doc.inadmissible_reason ? " (" + doc.inadmissible_reason + ")" : "") +
        "; observed R²: " + percent(r2.observed) + ".";
    const body2 = $("g-slopes");
    body2.textContent = "";
    for (const c of doc.coefficients || []) body2.appendChild(row([c.name, fmt(c.ols, 3), fmt(c.corrected, 3), interval(c.ci, 3)], true));
    showCorrectionCommon(doc);
  }

  // ---------------------------------------------------------------- Report
  function reportRequest() {
    const request = sheetRequest("report-problems");
    if (!request) return null;
    const p = request.params;
    if ($("e-spread").checked) p.set("score_spread", "1");
    // The study's settings carry the moderators and their values; without a study, the
    // moderators (and any values given) alone.
    if ($("s-coef").value && $("s-n").value) studyParams(p);
    else { addModerators(p); addAt(p); }
    if ($("k-x-source").value === "benchmark" && $("k-r").value && $("k-y").value.trim() && p.has("n")) {
      p.set("r", $("k-r").value);
      p.set("rel_y", $("k-y").value.trim());
    }
    return request;
  }
  async function report() {
    const request = reportRequest();
    if (!request) return;
    const command = await send("/api/report-command", { params: request.params, body: null }, { status: "report-status", problems: "report-problems" }, "");
    if (command) {
      $("report-command").value = command.command;
      $("report-command-box").hidden = false;
    }
    const zip = await send("/api/report", request, { status: "report-status", problems: "report-problems" }, "Writing the report…", true);
    if (!zip) return;
    const a = element("a");
    a.href = URL.createObjectURL(zip);
    a.download = "relyard-report.zip";
    document.body.appendChild(a);
    a.click();
    a.remove();
    setTimeout(function () { URL.revokeObjectURL(a.href); }, 60000);
    $("report-status").textContent = "Downloaded relyard-report.zip (" + Math.round(zip.size / 1024) + " KB).";
  }

  document.addEventListener("DOMContentLoaded", async function () {
    $("pool-form").addEventListener("submit", function (e) { e.preventDefault(); pool(); });
    $("explain-form").addEventListener("submit", function (e) { e.preventDefault(); explain(); });
    $("items-form").addEventListener("submit", function (e) { e.preventDefault(); items(); });
    $("icc-form").addEventListener("submit", function (e) { e.preventDefault(); icc(); });
    $("check-form").addEventListener("submit", function (e) { e.preventDefault(); place(); });
    $("correct-form").addEventListener("submit", function (e) { e.preventDefault(); correct(); });
    $("explain-stop").addEventListener("click", stopExplain);
    $("remap").addEventListener("click", remap);
    $("carry").addEventListener("click", carry);
    $("report").addEventListener("click", report);
    $("sheet").addEventListener("change", function () { useDemo = false; mapping = {}; });
    $("item-file").addEventListener("change", function () { useDemoItems = false; });
    $("use-demo").addEventListener("click", function () { useDemo = true; mapping = {}; $("sheet").value = ""; pool(); });
    $("items-demo").addEventListener("click", function () { useDemoItems = true; $("item-file").value = ""; items(); });
    $("k-case").addEventListener("change", correctionCase);
    $("g-file").addEventListener("change", function () { useDemoStudy = false; });
    $("g-demo").addEventListener("click", function () {
      useDemoStudy = true;
      $("g-file").value = "";
      $("g-source").value = "data";
      $("correct-status").textContent = "The invented demo study (scores candor, safety and engagement of 250 respondents) will be used.";
    });
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
      // With --demo the demo sheet is pooled and the demo item data analysed at once.
      if (start.demo) { useDemo = true; useDemoItems = true; pool(); items(); }
    } catch (e) { /* the page still works without it */ }
  });
})();
