// Forebook's only script: dynamic list rows in forms, and live figures from the server.
// Loaded with "defer"; the pages work without it (one blank row is always rendered).
"use strict";

function nextKey(container, letter) {
  let highest = 0;
  container.querySelectorAll("input[name$='-key']").forEach((input) => {
    const number = parseInt((input.value || "").slice(1), 10);
    if (!Number.isNaN(number)) highest = Math.max(highest, number);
  });
  return letter + (highest + 1);
}

function setUpFormset(container) {
  const prefix = container.dataset.formset;
  const total = container.querySelector(`input[name='${prefix}-TOTAL_FORMS']`);
  const list = container.querySelector(".formset-items");
  const template = container.querySelector("template.formset-empty");
  const letter = container.dataset.keyLetter;
  container.querySelector(".add-row").addEventListener("click", () => {
    const index = parseInt(total.value, 10);
    const html = template.innerHTML.replace(/__prefix__/g, String(index));
    list.insertAdjacentHTML("beforeend", html);
    total.value = String(index + 1);
    const item = list.lastElementChild;
    if (letter) {
      const key = nextKey(container, letter);
      const keyInput = item.querySelector("input[name$='-key']");
      if (keyInput) keyInput.value = key;
      const heading = item.querySelector(".item-key");
      if (heading) heading.textContent = key;
    }
    item.querySelectorAll("output.live-check").forEach(setUpLiveCheck);
    const first = item.querySelector("textarea, input:not([type=hidden]), select");
    if (first) first.focus();
    document.dispatchEvent(new CustomEvent("forebook:rows-changed"));
  });
  container.addEventListener("change", (event) => {
    if (event.target.name && event.target.name.endsWith("-DELETE")) {
      event.target.closest(".formset-item").classList.toggle("removed", event.target.checked);
      document.dispatchEvent(new CustomEvent("forebook:rows-changed"));
    }
  });
}

// Keep each hypothesis's "tested on outcome" choices in step with the outcome rows above it.
function syncOutcomeChoices() {
  const outcomes = [];
  document.querySelectorAll("[data-formset='outcomes'] .formset-item").forEach((item) => {
    const key = item.querySelector("input[name$='-key']");
    const name = item.querySelector("input[name$='-name']");
    const removed = item.querySelector("input[name$='-DELETE']");
    if (key && key.value && !(removed && removed.checked)) outcomes.push([key.value, `${key.value} · ${name && name.value ? name.value : "unnamed"}`]);
  });
  document.querySelectorAll("[data-formset='hypotheses'] select[name$='-outcome']").forEach((select) => {
    const current = select.value;
    select.replaceChildren(new Option("—", ""));
    outcomes.forEach(([value, label]) => select.add(new Option(label, value, false, value === current)));
  });
}

function debounce(fn, wait) {
  let timer = null;
  return (...args) => { clearTimeout(timer); timer = setTimeout(() => fn(...args), wait); };
}

// Ask the server for live figures (power, p-value checks) and show its plain-text answer.
function setUpLiveOutput(output, form, fieldsSelector) {
  const refresh = debounce(async () => {
    const params = new URLSearchParams();
    form.querySelectorAll(fieldsSelector).forEach((input) => { if (input.name) params.append(input.name, input.value); });
    try {
      const response = await fetch(`${output.dataset.url}?${params}`, { headers: { Accept: "application/json" } });
      const data = await response.json();
      output.textContent = data.message || "";
      output.classList.toggle("problem", Boolean(data.problem));
    } catch (error) {
      output.textContent = "";
    }
  }, 350);
  form.addEventListener("input", (event) => { if (event.target.matches(fieldsSelector)) refresh(); });
  form.addEventListener("change", (event) => { if (event.target.matches(fieldsSelector)) refresh(); });
  refresh();
}

function setUpLiveCheck(output) {
  setUpLiveOutput(output, output.closest(".formset-item"), "input, select");
}

document.addEventListener("DOMContentLoaded", () => {
  document.querySelectorAll("[data-formset]").forEach(setUpFormset);
  if (document.querySelector("[data-formset='outcomes']")) {
    document.addEventListener("forebook:rows-changed", syncOutcomeChoices);
    document.querySelector("[data-formset='outcomes']").addEventListener("input", debounce(syncOutcomeChoices, 300));
  }
  const power = document.getElementById("live-power");
  if (power) setUpLiveOutput(power, power.closest("form"), "#sample-size input, #sample-size select");
  document.querySelectorAll("output.live-check").forEach(setUpLiveCheck);
});

// Generated files (signed records on the study page, lab reports on the report page; markup in
// templates/includes/export_item.html): poll each unfinished export's status until it is ready
// (show the download link) or failed (show the error). Without JS, reloading shows the same.
const EXPORT_POLL_MS = 1500;

function showExportStatus(item, data) {
  item.querySelector(".record-stage").textContent = data.finished ? data.status_label : (data.stage || data.status_label);
  const progress = item.querySelector(".record-progress");
  progress.value = data.progress;
  progress.textContent = `${data.progress} %`;
  progress.hidden = data.finished;
  const download = item.querySelector(".record-download");
  if (data.download_url) download.href = data.download_url;
  download.hidden = !data.download_url;
  item.querySelector(".record-expiry").hidden = !data.download_url;
  const error = item.querySelector(".record-error");
  error.textContent = data.error || "";
  error.hidden = !data.error;
}

function pollExport(item) {
  const poll = async () => {
    try {
      const response = await fetch(item.dataset.recordStatus, { headers: { Accept: "application/json" } });
      if (!response.ok) throw new Error(`status ${response.status}`);
      const data = await response.json();
      showExportStatus(item, data);
      item.dataset.finished = String(data.finished);
      if (!data.finished) setTimeout(poll, EXPORT_POLL_MS);
    } catch (error) {
      const stage = item.querySelector(".record-stage");
      stage.textContent = "Could not reach the server; reload the page to see the export's progress.";
    }
  };
  setTimeout(poll, EXPORT_POLL_MS);
}

document.addEventListener("DOMContentLoaded", () => {
  document.querySelectorAll("[data-record-status][data-finished='false']").forEach(pollExport);
});
