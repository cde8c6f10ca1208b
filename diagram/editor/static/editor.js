// limbchart edit: the map is the form. The page holds the study as the plain data of a study
// file; every change is posted to the editor, which validates it with the study loader, assesses
// and draws it, and sends back the map (swapped in alone) and the results, or the problems.
"use strict";

(() => {
  const TOKEN = document.querySelector('meta[name="limbchart-token"]').content;
  const NUMBER = /^[-+]?(\d+\.?\d*|\.\d+)$/;
  const SAMPLE_FIELDS = ["psv", "edv", "waveform", "angle", "plaque", "comment"];

  const state = {
    doc: null,          // the study as file data
    name: "",           // the study file's name
    isNew: false,       // no file yet: Save asks for a name
    segments: [],       // scan order: {side, segment, name}
    graftSites: [],     // a graft's sampling sites, inflow to outflow
    index: 0,           // selected segment
    results: null,      // last results document
    mapBox: null,       // where the template sits on the drawn page (page points)
    dirty: false,
    placing: false,     // the next vessel click adds a lesion
    seq: 0,             // request counter: only the newest answer is shown
    timer: 0,
  };

  const $ = (sel, root = document) => root.querySelector(sel);
  const $$ = (sel, root = document) => Array.from(root.querySelectorAll(sel));

  // --- talking to the editor ---------------------------------------------------------------

  async function post(path, body) {
    const response = await fetch(path, {
      method: "POST",
      headers: { "Content-Type": "application/json", "X-Limbchart-Token": TOKEN },
      body: JSON.stringify(body),
    });
    return response;
  }

  async function load() {
    const response = await fetch("/api/study", { headers: { "X-Limbchart-Token": TOKEN } });
    const data = await response.json();
    state.doc = data.study;
    state.name = data.name;
    state.isNew = data.new;
    state.segments = data.segments;
    state.graftSites = data.graft_sites;
    fillPicker();
    fillStatic();
    select(0, false);
    setDirty(false);
    refresh(0);
  }

  function refresh(delay = 60) {
    clearTimeout(state.timer);
    state.timer = setTimeout(redraw, delay);
  }

  async function redraw() {
    const seq = ++state.seq;
    let response;
    try {
      response = await post("/api/preview", state.doc);
    } catch (err) {
      if (seq === state.seq) showProblems([{ field: "", message: "the editor is not answering (was it stopped?)." }]);
      return;
    }
    const data = await response.json();
    if (seq !== state.seq) return;  // a newer change is on its way
    if (response.ok && data.svg) {
      showMap(data.svg);
      state.mapBox = data.map_box;
      state.results = data.results;
      showProblems([]);
      showResults();
    } else {
      $("#map").classList.add("stale");
      showProblems(data.problems || []);
    }
  }

  // --- the study data ----------------------------------------------------------------------

  function limbOf(side, create) {
    const doc = state.doc;
    if (!doc.limbs) { if (!create) return null; doc.limbs = {}; }
    if (!doc.limbs[side]) { if (!create) return null; doc.limbs[side] = {}; }
    return doc.limbs[side];
  }

  function aortaSide() {
    const limbs = state.doc.limbs || {};
    if (limbs.left && limbs.left.segments && limbs.left.segments.AO && !(limbs.right && limbs.right.segments && limbs.right.segments.AO)) return "left";
    return "right";
  }

  function current() {
    const seg = state.segments[state.index];
    const side = seg.side === "midline" ? aortaSide() : seg.side;
    return { side, segment: seg.segment, drawnSide: seg.side, name: seg.name };
  }

  function sampleOf(create) {
    const { side, segment } = current();
    const limb = limbOf(side, create);
    if (!limb) return null;
    if (!limb.segments) { if (!create) return null; limb.segments = {}; }
    if (!limb.segments[segment]) { if (!create) return null; limb.segments[segment] = {}; }
    return limb.segments[segment];
  }

  function readInput(el) {
    if (el.dataset.kind === "flag") return el.checked ? true : undefined;
    const text = el.value.trim();
    if (text === "") return undefined;
    if (el.dataset.kind === "number" && NUMBER.test(text)) return Number(text);
    return el.tagName === "TEXTAREA" ? el.value : text;  // text that is not a number: the loader says so
  }

  function writeInput(el, value) {
    if (el.dataset.kind === "flag") el.checked = value === true;
    else el.value = value === undefined || value === null ? "" : String(value);
  }

  function setIn(obj, key, value) {
    if (value === undefined) delete obj[key];
    else obj[key] = value;
  }

  function prune() {
    // Drop what became empty, so the file keeps only what was recorded.
    const doc = state.doc;
    for (const side of ["right", "left"]) {
      const limb = doc.limbs && doc.limbs[side];
      if (!limb) continue;
      if (limb.segments) {
        for (const seg of Object.keys(limb.segments)) if (!Object.keys(limb.segments[seg]).length) delete limb.segments[seg];
        if (!Object.keys(limb.segments).length) delete limb.segments;
      }
      if (limb.lesions && !limb.lesions.length) delete limb.lesions;
      for (const graft of limb.grafts || []) {
        const samples = graft.samples;
        if (!samples) continue;
        for (const site of Object.keys(samples)) if (!Object.keys(samples[site]).length) delete samples[site];
        if (!Object.keys(samples).length) delete graft.samples;
      }
      for (const kind of ["stents", "grafts"]) if (limb[kind] && !limb[kind].length) delete limb[kind];
      if (!Object.keys(limb).length) delete doc.limbs[side];
    }
    if (doc.limbs && !Object.keys(doc.limbs).length) delete doc.limbs;
    for (const group of ["patient", "pressures"]) {
      const obj = doc[group];
      if (!obj) continue;
      for (const key of Object.keys(obj)) if (obj[key] && typeof obj[key] === "object" && !Object.keys(obj[key]).length) delete obj[key];
      if (!Object.keys(obj).length) delete doc[group];
    }
  }

  function changed() {
    prune();
    setDirty(true);
    refresh();
  }

  // --- the segment card --------------------------------------------------------------------

  function fillPicker() {
    const picker = $("#segment-picker");
    picker.textContent = "";
    state.segments.forEach((seg, i) => {
      const option = document.createElement("option");
      option.value = String(i);
      option.textContent = `${seg.side !== "midline" ? seg.side[0].toUpperCase() + " " : ""}${seg.segment}`;
      picker.append(option);
    });
  }

  function select(index, focus = true) {
    const n = state.segments.length;
    state.index = ((index % n) + n) % n;
    const { segment, drawnSide, name } = current();
    $("#segment-title").textContent = `${drawnSide === "right" ? "Right " : drawnSide === "left" ? "Left " : ""}${segment}`;
    $("#segment-title").title = name;
    $("#segment-picker").value = String(state.index);
    const sample = sampleOf(false) || {};
    for (const field of SAMPLE_FIELDS) writeInput($(`#sample-fields [data-field="${field}"]`), sample[field]);
    fillLesions();
    fillDevices();
    markSelected();
    showResults();
    showProblems(state.problems || []);
    if (focus) $('#sample-fields [name="psv"]').focus();
  }

  function samplePath(field) {
    const { side, segment } = current();
    return `limbs.${side}.segments.${segment}.${field}`;
  }

  function lesionIndexes() {
    const { side, segment } = current();
    const limb = limbOf(side, false);
    const out = [];
    ((limb && limb.lesions) || []).forEach((lesion, i) => { if (lesion.at === segment) out.push(i); });
    return out;
  }

  function fillLesions() {
    const box = $("#lesion-list");
    box.textContent = "";
    const { side } = current();
    const limb = limbOf(side, false);
    for (const i of lesionIndexes()) {
      const lesion = limb.lesions[i];
      const node = $("#lesion-template").content.firstElementChild.cloneNode(true);
      node.dataset.lesion = String(i);
      $("legend", node).textContent = `Lesion ${i + 1} (${side} leg)`;
      const bands = $(".bands", node);
      bands.append(new Option("", ""));
      for (const band of (state.results && state.results.bands) || []) {
        if (band.id !== "not-assessed") bands.append(new Option(band.label, band.id));
      }
      for (const el of $$("[data-field]", node)) {
        el.dataset.path = `limbs.${side}.lesions[${i}].${el.dataset.field}`;
        el.name = `lesion-${el.dataset.field}`;
        writeInput(el, lesion[el.dataset.field]);
      }
      box.append(node);
    }
  }

  function addLesion(side, segment, fromCm) {
    const limb = limbOf(side, true);
    if (!limb.lesions) limb.lesions = [];
    const lesion = { at: segment };
    if (fromCm !== undefined) lesion.from_cm = fromCm;
    limb.lesions.push(lesion);
    fillLesions();
    changed();
    const rows = $$("#lesion-list fieldset");
    const last = rows[rows.length - 1];
    if (last) $('[data-field="length_cm"]', last).focus();
  }

  function setPlacing(on) {
    state.placing = on;
    const button = $('[data-action="add-lesion"]');
    button.setAttribute("aria-pressed", on ? "true" : "false");
    $("#map").classList.toggle("placing", on);
  }

  // --- stents and grafts of the selected segment's leg --------------------------------------

  function segmentIds() {
    const ids = [];
    for (const seg of state.segments) if (!ids.includes(seg.segment)) ids.push(seg.segment);
    return ids;
  }

  function fillSegmentChoices(select, value) {
    const ids = segmentIds();
    if (value && !ids.includes(value)) ids.push(value);  // a segment this map does not draw
    if (!value) select.append(new Option("", ""));
    for (const id of ids) select.append(new Option(id, id));
  }

  function bindParts(node, path) {
    // Each field names its place in the study, so input, problems and refill all go by path.
    for (const el of $$("[data-part]", node)) {
      el.dataset.path = `${path}.${el.dataset.part}`;
      const value = pathGet(el.dataset.path);
      if (el.classList.contains("segment-ids")) fillSegmentChoices(el, value);
      writeInput(el, value);
    }
  }

  function fillDevices() {
    const box = $("#device-list");
    box.textContent = "";
    const { side } = current();
    $("#device-title").textContent = `Stents and grafts, ${side} leg`;
    const limb = limbOf(side, false) || {};
    (limb.stents || []).forEach((stent, i) => box.append(deviceNode("stents", side, i)));
    (limb.grafts || []).forEach((graft, i) => box.append(deviceNode("grafts", side, i)));
    if (!box.children.length) {
      const none = document.createElement("p");
      none.className = "hint";
      none.textContent = `No stent or graft recorded in the ${side} leg.`;
      box.append(none);
    }
    showDeviceResults();
  }

  function deviceNode(kind, side, i) {
    const template = kind === "stents" ? "#stent-template" : "#graft-template";
    const node = $(template).content.firstElementChild.cloneNode(true);
    node.dataset.index = String(i);
    $("legend", node).textContent = `${kind === "stents" ? "Stent" : "Graft"} ${i + 1} (${side} leg)`;
    const path = `limbs.${side}.${kind}.${i}`;
    bindParts(node, path);
    if (kind === "grafts") {
      for (const site of state.graftSites) {
        const row = $("#site-template").content.firstElementChild.cloneNode(true);
        row.dataset.site = site;
        $(".site-name", row).textContent = site.replace(/_/g, " ");
        bindParts(row, `${path}.samples.${site}`);
        $(".sites", node).append(row);
      }
    }
    return node;
  }

  function addDevice(kind) {
    const { side, segment } = current();
    const limb = limbOf(side, true);
    if (!limb[kind]) limb[kind] = [];
    limb[kind].push(kind === "stents" ? { from: segment, to: segment } : { conduit: "vein", from: segment, to: segment });
    fillDevices();
    changed();
    const rows = $$(`#device-list [data-device="${kind}"]`);
    $('[data-part="from"]', rows[rows.length - 1]).focus();
  }

  function removeDevice(fieldset) {
    const kind = fieldset.dataset.device;
    limbOf(current().side, true)[kind].splice(Number(fieldset.dataset.index), 1);
    fillDevices();
    changed();
    $(`[data-action="add-${kind === "stents" ? "stent" : "graft"}"]`).focus();
  }

  function showDeviceResults() {
    const res = state.results;
    const limb = res && res.limbs[current().side];
    for (const node of $$('#device-list [data-device="grafts"]')) {
      const graft = limb && limb.grafts && limb.grafts[Number(node.dataset.index)];
      const line = $(".device-result", node);
      line.textContent = "";
      if (graft) {
        line.append(bandBadge(graft.band), ` ${graft.basis}`);
      }
      for (const row of $$(".site", node)) {
        const found = graft && (graft.sites || []).find((s) => s.site === row.dataset.site);
        const tag = $(".site-band", row);
        tag.hidden = !found;
        tag.textContent = found ? bandLabel(found.band) : "";
        tag.className = `band site-band${found ? ` band-${found.band}` : ""}`;
      }
    }
  }

  // --- the map -----------------------------------------------------------------------------

  function showMap(svg) {
    const map = $("#map");
    map.innerHTML = svg;  // our own renderer's SVG: text escaped, no script
    map.classList.remove("stale");
    markSelected();
  }

  function markSelected() {
    const { segment, drawnSide } = current();
    for (const el of $$("#map .selected")) el.classList.remove("selected");
    for (const el of $$(`#map [data-segment="${segment}"][data-side="${drawnSide}"]`)) el.classList.add("selected");
  }

  function svgPoint(svg, event) {
    const point = svg.createSVGPoint();
    point.x = event.clientX;
    point.y = event.clientY;
    return point.matrixTransform(svg.getScreenCTM().inverse());
  }

  async function mapClick(event) {
    const target = event.target.closest("[data-segment]");
    if (!target) return;
    const side = target.dataset.side;
    const segment = target.dataset.segment;
    const index = state.segments.findIndex((s) => s.side === side && s.segment === segment);
    if (index < 0) return;
    select(index, !(state.placing || event.shiftKey));
    if (!(state.placing || event.shiftKey) || target.tagName === "g" || !state.mapBox) return;
    setPlacing(false);
    const p = svgPoint(target.ownerSVGElement, event);
    const response = await post("/api/locate", { side, segment, x: p.x, y: p.y, map_box: state.mapBox });
    const data = await response.json();
    if (response.ok) addLesion(current().side, segment, data.from_cm);
    else showProblems(data.problems || []);
  }

  // --- results and problems ----------------------------------------------------------------

  function bandLabel(id) {
    const band = ((state.results && state.results.bands) || []).find((b) => b.id === id);
    return band ? band.label : id;
  }

  // a band's label in its own colours (editor.css), as shown beside a segment or a graft
  function bandBadge(id) {
    const badge = document.createElement("b");
    badge.className = `band band-${id}`;
    badge.dataset.band = id;
    badge.textContent = bandLabel(id);
    return badge;
  }

  function showResults() {
    const res = state.results;
    if (!res) return;
    const { side, segment, drawnSide } = current();
    const limb = res.limbs[side];
    const seg = limb && limb.segments[segment];
    const line = $("#segment-result");
    line.textContent = "";
    if (seg) {
      line.append(bandBadge(seg.band));
      // the basis names the ratio when the band rests on it; otherwise the ratio stands before it
      const vr = seg.vr !== null ? `Vr ${Number(seg.vr).toFixed(2)}` : null;
      const parts = vr && !seg.basis.startsWith(vr) ? [vr, seg.basis] : [seg.basis];
      line.append(" " + parts.join(" · "));
    }
    const mine = res.warnings.filter((w) => w.segment === segment && (w.side === drawnSide || drawnSide === "midline" || !w.side));
    fillList($("#segment-warnings"), mine.map((w) => w.message));
    fillList($("#all-warnings"), res.warnings.map((w) => `${w.side ? w.side + " " : ""}${w.segment ? w.segment + ": " : ""}${w.message}`));
    showLegs(res);
    showDeviceResults();
    $("#page-caution").textContent = res.caution;
  }

  function fillList(list, lines) {
    list.textContent = "";
    for (const text of lines) {
      const item = document.createElement("li");
      item.textContent = text;
      list.append(item);
    }
  }

  function showLegs(res) {
    const box = $("#legs");
    box.textContent = "";
    for (const side of ["right", "left"]) {
      const limb = res.limbs[side];
      if (!limb) continue;
      const block = document.createElement("div");
      block.className = "leg";
      const title = document.createElement("h3");
      title.textContent = side === "right" ? "Right leg" : "Left leg";
      block.append(title);
      const rows = [];
      if (limb.abi !== null && limb.abi !== undefined) rows.push(`ABI ${Number(limb.abi).toFixed(2)} ${limb.abi_category || ""} (${limb.abi_basis})`);
      if (limb.tbi !== null && limb.tbi !== undefined) rows.push(`TBI ${Number(limb.tbi).toFixed(2)} (${limb.tbi_basis})`);
      if (limb.ischaemia_grade !== null && limb.ischaemia_grade !== undefined) rows.push(`ischaemia grade ${limb.ischaemia_grade} (${limb.ischaemia_basis})`);
      const plan = limb.planning;
      if (plan) {
        for (const level of plan.levels || []) {
          rows.push(`${level.level}: ${bandLabel(level.worst_band)}, ${level.diseased_cm} cm diseased, ${level.occluded_cm} cm occluded`);
        }
        const given = (key) => plan[key] !== undefined && plan[key] !== null;
        if (given("runoff_score")) rows.push(`runoff score ${plan.runoff_score} (${plan.runoff_basis})`);
        if (given("fp_grade")) rows.push(`GLASS FP${plan.fp_grade}`);
        if (given("ip_grade")) rows.push(`GLASS IP${plan.ip_grade}${given("target") ? ` (target ${plan.target})` : ""}`);
        if (given("stage")) rows.push(`GLASS stage ${plan.stage} (${plan.stage_basis})`);
        if (given("tasc_fp")) rows.push(`TASC II FP ${plan.tasc_fp}`);
      }
      const list = document.createElement("ul");
      fillList(list, rows.length ? rows : ["nothing recorded"]);
      block.append(list);
      box.append(block);
    }
  }

  function showProblems(problems) {
    state.problems = problems;
    for (const el of $$(".problem-note")) el.remove();
    for (const el of $$(".has-problem")) el.classList.remove("has-problem");
    const loose = [];
    for (const problem of problems) {
      const el = fieldFor(problem.field);
      if (el) {
        el.classList.add("has-problem");
        const note = document.createElement("span");
        note.className = "problem-note";
        note.textContent = problem.message;
        el.closest("label").after(note);
      } else {
        loose.push(problem.message);
      }
    }
    const box = $("#problems");
    box.hidden = loose.length === 0;
    box.textContent = loose.join("\n");
    setStatus(problems.length ? `${problems.length} problem${problems.length > 1 ? "s" : ""}` : null);
  }

  function fieldFor(field) {
    if (!field) return null;
    const path = field.replace(/\[(\d+)\]/g, ".$1");  // the loader writes list items as [i]
    for (const el of $$("[data-path]")) if (el.dataset.path === path) return el;
    for (const name of SAMPLE_FIELDS) if (samplePath(name) === path) return $(`#sample-fields [data-field="${name}"]`);
    const lesion = /^limbs\.(right|left)\.lesions\.(\d+)\.(\w+)$/.exec(path);
    if (lesion && lesion[1] === current().side) {
      return $(`#lesion-list fieldset[data-lesion="${lesion[2]}"] [data-field="${lesion[3]}"]`);
    }
    return null;
  }

  // --- static fields (pressures, patient and exam) ----------------------------------------

  function pathGet(path) {
    let obj = state.doc;
    for (const key of path.split(".")) { if (!obj || typeof obj !== "object") return undefined; obj = obj[key]; }
    return obj;
  }

  function pathSet(path, value) {
    const keys = path.split(".");
    let obj = state.doc;
    for (const key of keys.slice(0, -1)) { if (!obj[key] || typeof obj[key] !== "object") obj[key] = {}; obj = obj[key]; }
    setIn(obj, keys[keys.length - 1], value);
  }

  function fillStatic() {
    $("#file-name").textContent = state.name;
    for (const el of $$("#form-pane [data-path]")) if (!el.closest("#lesion-list, #device-list")) writeInput(el, pathGet(el.dataset.path));
  }

  // --- saving and exporting ---------------------------------------------------------------

  function setDirty(dirty) {
    state.dirty = dirty;
    document.body.classList.toggle("dirty", dirty);
    setStatus(null);
  }

  function setStatus(text) {
    const problems = state.problems && state.problems.length;
    const clean = state.savedName ? `saved ${state.savedName}` : "saved";
    $("#status").textContent = text || (problems ? "" : state.dirty ? "unsaved changes" : clean);
  }

  async function save(name, confirmed) {
    const body = { study: state.doc };
    if (name) body.name = name;
    if (confirmed) body.confirm = true;
    const response = await post("/api/save", body);
    const data = await response.json();
    if (response.status === 409) {
      if (window.confirm(`${data.problems[0].message}\nReplace it?`)) return save(name, true);
      return;
    }
    if (!response.ok) { showProblems(data.problems || []); return; }
    state.name = data.saved;
    state.savedName = data.saved; // a preview answered after the save keeps saying which file
    state.isNew = false;
    $("#file-name").textContent = state.name;
    setDirty(false);
    setStatus(`saved ${data.saved}`);
  }

  async function saveAs() {
    const name = window.prompt("Save the study as (a file name in the same folder, .yaml or .json):", state.name);
    if (name) await save(name.trim(), false);
  }

  async function download() {
    const format = $("#export-format").value;
    const response = await post(`/api/draw?format=${encodeURIComponent(format)}`, state.doc);
    if (!response.ok) { const data = await response.json(); showProblems(data.problems || []); return; }
    const blob = await response.blob();
    const disposition = response.headers.get("content-disposition") || "";
    const match = /filename="([^"]+)"/.exec(disposition);
    const link = document.createElement("a");
    link.href = URL.createObjectURL(blob);
    link.download = match ? match[1] : `study.${format}`;
    document.body.append(link);
    link.click();
    link.remove();
    setTimeout(() => URL.revokeObjectURL(link.href), 10000);
  }

  // --- events ----------------------------------------------------------------------------

  function onInput(event) {
    const el = event.target;
    if (!el.dataset) return;
    if (el.closest("#sample-fields")) {
      const sample = sampleOf(true);
      setIn(sample, el.dataset.field, readInput(el));
      changed();
    } else if (el.closest("#lesion-list")) {
      const i = Number(el.closest("fieldset").dataset.lesion);
      const lesion = limbOf(current().side, true).lesions[i];
      setIn(lesion, el.dataset.field, readInput(el));
      changed();
    } else if (el.dataset.path) {
      pathSet(el.dataset.path, readInput(el));
      changed();
    }
  }

  function cardFocusables() {
    return $$("#segment-card input, #segment-card select:not(#segment-picker)");
  }

  function onKey(event) {
    if ((event.ctrlKey || event.metaKey) && event.key.toLowerCase() === "s") {
      event.preventDefault();
      if (state.isNew) saveAs(); else save();
      return;
    }
    if (event.altKey && event.key.toLowerCase() === "d") {
      event.preventDefault();  // to the stents and grafts of this leg: their first field
      const first = $("#device-list select, #device-list input") || $('[data-action="add-stent"]');
      first.focus();
      return;
    }
    if (event.altKey && event.key.toLowerCase() === "l") {
      event.preventDefault();
      const { side, segment } = current();
      addLesion(side, segment, 0);
      return;
    }
    const el = event.target;
    if (!el.closest || !el.closest("#segment-card") || el.id === "segment-picker") return;
    if (event.key === "Enter" && el.tagName !== "TEXTAREA") {
      event.preventDefault();
      select(state.index + (event.shiftKey ? -1 : 1));
      return;
    }
    if (event.key === "Tab") {
      const all = cardFocusables();
      if (!event.shiftKey && el === all[all.length - 1]) {
        event.preventDefault();
        select(state.index + 1);
      } else if (event.shiftKey && el === all[0]) {
        event.preventDefault();
        select(state.index - 1, false);
        const again = cardFocusables();
        again[again.length - 1].focus();
      }
    }
  }

  function onClick(event) {
    const action = event.target.closest("[data-action]");
    if (!action) return;
    const what = action.dataset.action;
    if (what === "save") { if (state.isNew) saveAs(); else save(); }
    else if (what === "save-as") saveAs();
    else if (what === "export") download();
    else if (what === "add-lesion") setPlacing(!state.placing);
    else if (what === "add-stent") addDevice("stents");
    else if (what === "add-graft") addDevice("grafts");
    else if (what === "remove-device") removeDevice(action.closest("fieldset"));
    else if (what === "remove-lesion") {
      const i = Number(action.closest("fieldset").dataset.lesion);
      limbOf(current().side, true).lesions.splice(i, 1);
      fillLesions();
      changed();
    }
  }

  document.addEventListener("DOMContentLoaded", () => {
    document.addEventListener("input", onInput);
    document.addEventListener("keydown", onKey);
    document.addEventListener("click", onClick);
    $("#map").addEventListener("click", mapClick);
    $("#segment-picker").addEventListener("change", (event) => select(Number(event.target.value)));
    window.addEventListener("beforeunload", (event) => {
      if (!state.dirty) return;
      event.preventDefault();
      event.returnValue = "";  // the browser asks before unsaved changes are lost
    });
    load();
  });
})();
