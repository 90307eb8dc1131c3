// The TeachServe annotator page: one session, one item at a time. No build step, no dependencies.
// State that must survive a reload lives in sessionStorage under the session id: the token, an answer that was
// sent but not yet acknowledged (re-sent unchanged, which the answers API treats as the same answer), the last
// feedback, and the last phase announced to the parent window.

const $ = (id) => document.getElementById(id);
const sessionId = decodeURIComponent(location.pathname.split("/").filter(Boolean)[1] ?? "");
const key = (name) => `teachserve:${sessionId}:${name}`;
const api = "/api/v1";

const store = {
  get(name) {
    try { return JSON.parse(sessionStorage.getItem(key(name)) ?? "null"); } catch { return memory[name] ?? null; }
  },
  set(name, value) {
    memory[name] = value;
    try { sessionStorage.setItem(key(name), JSON.stringify(value)); } catch { /* storage blocked: memory only */ }
  },
  remove(name) {
    delete memory[name];
    try { sessionStorage.removeItem(key(name)); } catch { /* storage blocked */ }
  },
};
const memory = {};

let token = null;
let state = null; // the last page state from the server
let busy = false;
let onEnter = null; // what Enter does on the current screen, if anything
let guidance = null; // the owner's instructions, fetched once when the project has any

// ---------- talking to the server ----------

class HttpProblem extends Error {
  constructor(status, problem) {
    super(problem?.detail ?? `HTTP ${status}`);
    this.status = status;
    this.problem = problem;
  }
}

const sleep = (ms) => new Promise((resolve) => setTimeout(resolve, ms));

/** fetch with retries on a dropped connection or a busy server; other errors are thrown as HttpProblem. */
async function call(method, path, body) {
  for (let attempt = 0; ; attempt++) {
    let response;
    try {
      response = await fetch(api + path, {
        method,
        headers: {
          ...(token ? { Authorization: `Bearer ${token}` } : {}),
          ...(body ? { "Content-Type": "application/json" } : {}),
        },
        body: body ? JSON.stringify(body) : undefined,
        cache: "no-store",
        referrerPolicy: "no-referrer",
      });
    } catch {
      response = null; // network error: offline, connection reset
    }
    if (response && response.status < 500 && response.status !== 429) {
      connection(null);
      const problem = response.headers.get("Content-Type")?.includes("json") ? await response.json() : null;
      if (!response.ok) throw new HttpProblem(response.status, problem);
      return problem;
    }
    const wait = Math.min(8000, 500 * 2 ** attempt);
    connection(`Connection lost. Retrying in ${Math.round(wait / 1000) || 1} s; your answers are kept.`);
    await sleep(wait);
  }
}

function connection(message) {
  const el = $("connection");
  el.hidden = !message;
  el.textContent = message ?? "";
}

// ---------- the parent window ----------

/** Posts to each configured parent origin; a browser delivers only to the one actually framing the page. */
function notifyParent(type, extra = {}) {
  if (window.parent === window || !state) return;
  const message = {
    source: "teachserve",
    type,
    sessionId,
    phase: state.phase,
    step: state.step,
    itemsTaught: state.itemsTaught,
    testAnswered: state.testAnswered,
    ...extra,
  };
  for (const origin of state.parentOrigins ?? []) window.parent.postMessage(message, origin);
}

function trackPhase() {
  const previous = store.get("phase");
  if (previous === state.phase) return;
  store.set("phase", state.phase);
  if (previous !== null) notifyParent("teachserve:phase", { previousPhase: previous });
  if (state.phase === "released" || state.phase === "failed")
    notifyParent("teachserve:end", { released: state.phase === "released" });
}

// ---------- screens ----------

const views = ["view-loading", "view-item", "view-guide", "view-notice", "view-end", "view-problem"];

function show(viewId, focusId) {
  for (const id of views) $(id).hidden = id !== viewId;
  // Which screen and step are showing, for platform QA and the browser tests to wait on.
  document.body.dataset.view = viewId === "view-item" && !$("feedback").hidden ? "feedback" : viewId.slice(5);
  document.body.dataset.step = String(state?.step ?? "");
  const target = $(focusId ?? viewId).querySelector?.("h1") ?? $(focusId);
  (focusId ? $(focusId) : target)?.focus({ preventScroll: false });
}

function announce(text) {
  const live = $("live");
  live.textContent = "";
  // A fresh text node after clearing makes screen readers announce repeated messages too.
  requestAnimationFrame(() => { live.textContent = text; });
}


function renderProgress() {
  const s = state;
  $("progress").hidden = false;
  const refresher = s.purpose === "refresher";
  $("project-name").textContent = refresher ? `${s.projectName} · refresher` : s.projectName;
  let fraction;
  if (s.phase === "teaching") {
    // Plain progress: items done of the teaching budget. The model's predicted error is not shown here: it can move
    // against the annotator's own results (it may fall after a wrong answer), which reads as nonsense.
    $("progress-phase").textContent = `Teaching · item ${s.itemsTaught + 1} of at most ${s.maxTeachingItems}`;
    fraction = s.itemsTaught / Math.max(1, s.maxTeachingItems);
    $("progress-detail").textContent = refresher
      ? "A short refresher on the cases your recent work suggests you now find hard, with feedback; then a short check without feedback."
      : "Practice with feedback. It ends as soon as your answers show you have the rule, then comes a short check without feedback.";
  } else if (s.phase === "testing") {
    $("progress-phase").textContent = `${checkName(s)} · item ${s.attemptAnswered + 1}`;
    fraction = s.attemptAnswered / Math.max(1, s.maxTestItems);
    $("progress-detail").textContent = `At most ${s.maxTestItems} items; the check may end sooner. No feedback during the check.`;
  } else {
    $("progress-phase").textContent = s.phase === "released" ? "Released" : "Finished";
    fraction = 1;
    $("progress-detail").textContent = `${s.itemsTaught} teaching items, ${s.testAnswered} check items.`;
  }
  fraction = Math.max(0, Math.min(1, fraction));
  $("meter").setAttribute("aria-valuenow", String(Math.round(fraction * 100)));
  $("meter").dataset.phase = s.phase;
  $("meter-fill").style.width = `${(fraction * 100).toFixed(1)}%`;
}

function renderItemContent(item) {
  const figure = $("item-figure");
  figure.replaceChildren();
  if (item.svgDataUri) {
    const img = document.createElement("img");
    img.src = item.svgDataUri;
    img.alt = item.text ? "" : "The item to label (a drawing).";
    img.className = "svg";
    figure.append(img);
  } else if (item.imageUrl) {
    const img = document.createElement("img");
    img.src = item.imageUrl;
    img.alt = item.text ? "" : "The item to label (a picture).";
    img.referrerPolicy = "no-referrer";
    figure.append(img);
  }
  if (item.text) {
    const text = document.createElement("p");
    text.className = "text";
    text.textContent = item.text;
    figure.append(text);
  }
  if (!item.svgDataUri && !item.imageUrl && !item.text) {
    const text = document.createElement("p");
    text.textContent = "This item has no content that can be shown. Choose any label; the owner will be told.";
    figure.append(text);
  }
}

function renderButtons(labels, enabled) {
  const box = $("label-buttons");
  box.replaceChildren();
  // Number keys only where a keyboard is likely (a fine pointer that hovers); on touch screens, say "tap".
  const keyboard = window.matchMedia("(hover: hover) and (pointer: fine)").matches;
  labels.forEach((label, i) => {
    const button = document.createElement("button");
    button.type = "button";
    button.className = "label";
    button.dataset.label = label;
    if (i < 9 && keyboard) {
      const kbd = document.createElement("kbd");
      kbd.textContent = String(i + 1);
      kbd.setAttribute("aria-hidden", "true");
      button.append(kbd);
      button.setAttribute("aria-keyshortcuts", String(i + 1));
    }
    const text = document.createElement("span");
    text.textContent = label;
    button.append(text);
    button.disabled = !enabled;
    button.addEventListener("click", () => answer(label));
    box.append(button);
  });
  const shortcut = labels.length > 1 ? `Keys 1–${Math.min(9, labels.length)} choose a label.` : "Key 1 chooses the label.";
  $("labels-hint").textContent = keyboard ? shortcut : (labels.length > 1 ? "Tap the label that fits." : "Tap the label.");
}

function renderItem() {
  const s = state;
  renderProgress();
  renderItemContent(s.item);
  $("item-heading").textContent = s.phase === "teaching"
    ? `Item ${s.itemsTaught + 1}: which label fits?`
    : `${checkName(s)}, item ${s.attemptAnswered + 1}: which label fits?`;
  $("labels-legend").textContent = "Labels";
  renderButtons(s.labels, true);
  $("labels-hint").hidden = false;
  $("feedback").hidden = true;
  onEnter = null;
  show("view-item", "item-heading");
}

function renderFeedback(feedback) {
  // feedback: { item, labels, chosen, response, teachingItem }
  const r = feedback.response;
  renderItemContent(feedback.item);
  $("item-heading").textContent = `Item ${feedback.teachingItem}: feedback`;
  renderButtons(feedback.labels, false);
  $("labels-hint").hidden = true; // the number keys do nothing while feedback shows
  for (const button of $("label-buttons").children) {
    const label = button.dataset.label;
    if (label === r.label) {
      button.classList.add("truth");
      button.append(Object.assign(document.createElement("span"), { className: "mark", textContent: "correct label" }));
    } else if (label === feedback.chosen) {
      button.classList.add("wrong");
      button.append(Object.assign(document.createElement("span"), { className: "mark", textContent: "your answer" }));
    }
  }
  const box = $("feedback");
  box.hidden = false;
  box.dataset.correct = r.correct ? "yes" : "no";
  $("verdict").textContent = r.correct ? "Right." : "Not quite.";
  $("feedback-label").textContent = r.correct
    ? `“${r.label}” is the correct label.`
    : `You chose “${feedback.chosen}”; the correct label is “${r.label}”.`;
  $("feedback-explanation").textContent = r.explanation ?? "";
  $("feedback-explanation").hidden = !r.explanation;
  const toTesting = r.phase === "testing";
  $("next-button").textContent = toTesting ? "Continue" : "Next item";
  onEnter = () => { store.remove("feedback"); refresh(); };
  $("next-button").onclick = onEnter;
  show("view-item", "next-button");
  announce(`${$("verdict").textContent} ${$("feedback-label").textContent} ${r.explanation ?? ""}`);
}

function renderNotice(heading, paragraphs, buttonText, then) {
  $("notice-heading").textContent = heading;
  $("notice-body").replaceChildren(...paragraphs.map((t) => Object.assign(document.createElement("p"), { textContent: t })));
  $("notice-button").textContent = buttonText;
  onEnter = then;
  $("notice-button").onclick = then;
  show("view-notice", "notice-heading");
  announce(`${heading}. ${paragraphs.join(" ")}`);
}

/** "Check" for the first, "Second check" and so on after a retake; items are numbered from 1 in each. */
function checkName(s) {
  const ordinals = ["", "", "Second", "Third", "Fourth", "Fifth"];
  if (!(s.attempt > 1)) return "Check";
  return ordinals[s.attempt] ? `${ordinals[s.attempt]} check` : `Check ${s.attempt}`;
}

function renderTestingIntro() {
  renderProgress();
  renderNotice(
    state.attempt > 1 ? `Teaching is done. Now the ${checkName(state).toLowerCase()}.` : "Teaching is done. Now a short check.",
    [
      "From here on there is no feedback: answer each item as well as you can.",
      `The check has at most ${state.maxTestItems} items and may end sooner, as soon as the result is clear.`,
    ],
    "Start the check",
    () => { store.set("intro", state.step); renderItem(); },
  );
}

function renderRetake() {
  renderProgress();
  renderNotice(
    "The check did not pass yet.",
    ["You get more teaching items with feedback, then a new check."],
    "Continue teaching",
    () => { store.remove("retake"); renderItem(); },
  );
}

function renderEnd() {
  const s = state;
  const end = s.end;
  renderProgress();
  const released = end.phase === "released";
  $("end-heading").textContent = s.purpose === "refresher"
    ? (released ? "Refresher passed: you are back to live work." : "Refresher not passed this time.")
    : (released ? "You are released for live work." : "Not released this time.");
  $("view-end").dataset.phase = end.phase;
  $("end-summary").textContent =
    `You answered ${end.itemsTaught} teaching items and ${end.testAnswered} check items.`;
  $("end-message").textContent = end.message
    ?? (released
      ? "The platform has been told. You can close this page."
      : "The platform has been told and will let you know what comes next. You can close this page.");
  const link = $("end-link");
  if (end.continueUrl) {
    link.href = end.continueUrl;
    link.textContent = end.continueLabel ?? "Continue";
    $("end-continue").hidden = false;
  } else {
    $("end-continue").hidden = true;
  }
  onEnter = null;
  show("view-end", "end-heading");
  announce(`${$("end-heading").textContent} ${$("end-message").textContent}`);
}

function renderProblem(heading, detail, retry) {
  $("problem-heading").textContent = heading;
  $("problem-detail").textContent = detail;
  const button = $("problem-button");
  button.hidden = !retry;
  button.onclick = retry ?? null;
  onEnter = null;
  show("view-problem", "problem-heading");
}

/**
 * The owner's instructions and label guidance. The HTML comes from the server's Markdown renderer, which escapes raw
 * HTML, drops images and keeps only http, https and mailto links, so it is inserted as it is.
 */
function renderGuide(buttonText, then) {
  $("guide-instructions").innerHTML = guidance.instructionsHtml ?? "";
  $("guide-instructions").hidden = !guidance.instructionsHtml;
  const list = $("guide-label-list");
  list.replaceChildren();
  for (const entry of guidance.labels) {
    const term = document.createElement("dt");
    term.textContent = entry.label;
    const description = document.createElement("dd");
    description.className = "markdown";
    description.innerHTML = entry.html;
    list.append(term, description);
  }
  $("guide-labels").hidden = guidance.labels.length === 0;
  $("guide-close").textContent = buttonText;
  onEnter = then;
  $("guide-close").onclick = then;
  show("view-guide", "guide-heading");
}

async function loadGuidance() {
  if (!state?.hasGuidance) { guidance = null; return; }
  if (guidance) return;
  guidance = await call("GET", `/sessions/${encodeURIComponent(sessionId)}/guidance`);
}

$("guide-open").addEventListener("click", async () => {
  if (busy || !guidance) return;
  // Back to whatever was showing: refresh draws the current step again (feedback and notices are kept in storage).
  renderGuide(state?.end ? "Back" : "Back to the item", () => refresh());
});

// ---------- flow ----------

async function refresh() {
  try {
    state = await call("GET", `/sessions/${encodeURIComponent(sessionId)}/page`);
  } catch (e) {
    return failed(e);
  }
  trackPhase();
  try {
    await loadGuidance();
  } catch (e) {
    return failed(e);
  }
  $("guide-open").hidden = !guidance;
  const feedback = store.get("feedback");
  if (feedback && feedback.response.step === state.step) return renderFeedback(feedback);
  // Before the first teaching item, the instructions come first (once per session in this tab; the header button re-opens them).
  if (guidance && state.phase === "teaching" && state.step === 0 && !store.get("guided")) {
    renderProgress();
    return renderGuide("Start", () => { store.set("guided", true); renderItem(); });
  }
  if (state.end) return renderEnd();
  if (store.get("retake") === state.step && state.phase === "teaching") return renderRetake();
  if (state.phase === "testing" && state.attemptAnswered === 0 && store.get("intro") !== state.step) return renderTestingIntro();
  renderItem();
}

async function answer(label) {
  if (busy || !state?.item || state.end) return;
  busy = true;
  for (const b of $("label-buttons").children) b.disabled = true;
  const pending = {
    request: { step: state.step, itemRef: state.item.ref, label },
    item: state.item,
    labels: state.labels,
    teachingItem: state.itemsTaught + 1,
    phase: state.phase,
  };
  store.set("pending", pending);
  await send(pending);
  busy = false;
}

/** Sends a stored answer until the server acknowledges it; re-sending the same step and body is safe. */
async function send(pending) {
  let response;
  try {
    response = await call("POST", `/sessions/${encodeURIComponent(sessionId)}/answers`, pending.request);
  } catch (e) {
    store.remove("pending");
    if (e instanceof HttpProblem && e.status === 409) return refresh(); // another tab answered; show what is current
    return failed(e);
  }
  store.remove("pending");
  if (response.correct !== undefined && response.correct !== null) {
    const feedback = { item: pending.item, labels: pending.labels, chosen: pending.request.label, response, teachingItem: pending.teachingItem };
    store.set("feedback", feedback);
    state = { ...state, phase: response.phase, step: response.step };
    trackPhase();
    return renderFeedback(feedback);
  }
  announce("Answer recorded.");
  if (response.retake) store.set("retake", response.step);
  return refresh();
}

function failed(e) {
  if (e instanceof HttpProblem && e.status === 401) {
    store.remove("token");
    return renderProblem("This session link has expired.",
      "Sessions stop working after a long pause. Ask the platform for a new link; your progress so far is kept.");
  }
  if (e instanceof HttpProblem && e.status === 410) {
    return renderProblem("This link has already been used.",
      "For your security each link opens the session once. Ask the platform for a new link; your progress so far is kept.");
  }
  const detail = e instanceof HttpProblem ? (e.problem?.detail ?? e.message) : String(e);
  return renderProblem("Something went wrong.", detail, () => refresh());
}

async function start() {
  if (!sessionId) return renderProblem("No session here.", "Open the link the platform gave you.");
  const code = new URLSearchParams(location.hash.slice(1)).get("code");
  if (code) {
    // Remove the code from the address bar and history before anything else can read it.
    history.replaceState(null, "", location.pathname + location.search);
    try {
      const exchanged = await call("POST", "/launch", { code });
      if (exchanged.sessionId !== sessionId) throw new Error("This link belongs to another session.");
      token = exchanged.token;
      store.set("token", token);
    } catch (e) {
      token = store.get("token");
      if (!token) return failed(e);
    }
  } else {
    token = store.get("token");
  }
  if (!token) {
    return renderProblem("This page needs your launch link.",
      "Open the onboarding link from the platform again; it signs this browser tab in to your session.");
  }
  const pending = store.get("pending");
  if (pending) {
    // The page was closed or the connection dropped while an answer was on its way: finish sending that one answer.
    busy = true;
    state = await call("GET", `/sessions/${encodeURIComponent(sessionId)}/page`).catch(() => null);
    if (state && pending.request.step < state.step + 1) {
      await send(pending);
      busy = false;
      notifyParent("teachserve:ready");
      return;
    }
    store.remove("pending");
    busy = false;
  }
  await refresh();
  notifyParent("teachserve:ready");
}

document.addEventListener("keydown", (event) => {
  if (event.ctrlKey || event.metaKey || event.altKey) return;
  if (event.key === "Enter" && onEnter && !event.repeat) {
    // Buttons handle their own Enter; this covers focus elsewhere on the page.
    if (event.target instanceof HTMLButtonElement || event.target instanceof HTMLAnchorElement) return;
    event.preventDefault();
    onEnter();
    return;
  }
  if (!/^[1-9]$/.test(event.key) || !state?.item || busy || !$("feedback").hidden || $("view-item").hidden) return;
  const label = state.labels[Number(event.key) - 1];
  if (label !== undefined) {
    event.preventDefault();
    answer(label);
  }
});

start();
