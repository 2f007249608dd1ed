// showops live pages: the stage manager's running order and a crew member's screen.
//
// Both poll the JSON API (GET /api/performances/<id>, then the live cue) every
// data-poll-ms milliseconds and redraw. Every press (standing by, go, confirm, check,
// HOLD, start, resume) becomes an action with a client id made here; it is kept in
// localStorage until the server answers, so a dropped network or a reload loses
// nothing: the screen says plainly that it is NOT YET RECORDED and sends it again,
// with the same client id, until the server answers (a retry never makes a second row).
"use strict";
(function () {
  var root = document.getElementById("live-root");
  if (!root) { return; }
  var api = window.showops.api;
  var pid = root.getAttribute("data-performance");
  var view = root.getAttribute("data-view");
  var canAct = root.getAttribute("data-can-act") === "1";
  var personId = root.getAttribute("data-person") ? Number(root.getAttribute("data-person")) : null;
  var pollMs = Number(root.getAttribute("data-poll-ms")) || 500;
  var RETRY_MS = 1500;
  var QUEUE_KEY = "showops.unsent." + pid;

  var night = null;      // GET /api/performances/<id>
  var cue = null;        // GET /api/performances/<id>/cues/<cue>
  var shownCue = null;   // the cue the page follows
  var queue = loadQueue();
  var sending = false;
  var lastContact = 0;

  function $(id) { return document.getElementById(id); }

  function el(tag, cls, text) {
    var node = document.createElement(tag);
    if (cls) { node.className = cls; }
    if (text !== undefined && text !== null) { node.textContent = text; }
    return node;
  }

  function clock(iso) {
    if (!iso) { return ""; }
    var d = new Date(iso);
    function two(n) { return (n < 10 ? "0" : "") + n; }
    return two(d.getHours()) + ":" + two(d.getMinutes()) + ":" + two(d.getSeconds());
  }

  function newClientId() {
    // crypto.randomUUID needs a secure context; a venue LAN is plain http.
    var bytes = new Uint8Array(12);
    window.crypto.getRandomValues(bytes);
    return "w-" + Array.prototype.map.call(bytes, function (b) { return (b < 16 ? "0" : "") + b.toString(16); }).join("");
  }

  // ---------------------------------------------------------------- the unsent queue

  function loadQueue() {
    try { return JSON.parse(window.localStorage.getItem(QUEUE_KEY) || "[]"); } catch (e) { return []; }
  }

  function saveQueue() {
    try { window.localStorage.setItem(QUEUE_KEY, JSON.stringify(queue)); } catch (e) { /* private mode: memory only */ }
  }

  function act(kind, cueId, step, label, extra) {
    var item = { kind: kind, cue: cueId, step: step || null, label: label, client_id: newClientId(),
                 device_at: new Date().toISOString() };
    if (extra) { for (var k in extra) { item[k] = extra[k]; } }
    queue.push(item);
    lastPress = { at: Date.now(), client_id: item.client_id };
    saveQueue();
    showMessage(null);
    render();
    flush();
  }

  function flush() {
    if (sending || !queue.length) { return; }
    sending = true;
    var item = queue[0];
    var body = { client_id: item.client_id, device_at: item.device_at };
    if (item.step) { body.step = item.step; }
    if (item.note) { body.note = item.note; }
    var path = item.kind === "signoff"
      ? "/api/performances/" + pid + "/signoff"
      : "/api/performances/" + pid + "/cues/" + item.cue + "/" + item.kind;
    api("POST", path, body).then(function (data) {
      queue.shift();
      saveQueue();
      sending = false;
      lastContact = Date.now();
      if (data.cue && data.cue.cue_id === shownCue) { cue = newest(data.cue, cue); }
      showMessage("Recorded at " + clock(data.row && data.row.at_utc) + ": " + item.label, "ok");
      render();
      flush();
      poll(true);
    }, function (err) {
      sending = false;
      if (err.status && err.status < 500) {
        // The server answered: refused (409, the reason is in the log) or not allowed.
        queue.shift();
        saveQueue();
        lastContact = Date.now();
        showMessage("Refused: " + err.message, "error");
        render();
        flush();
        poll(true);
      } else {
        // No answer (network down, server restarting): keep it and try again.
        render();
        window.setTimeout(flush, RETRY_MS);
      }
    });
  }

  // ---------------------------------------------------------------- polling

  // A poll sent just before a confirmation can come back after the confirmation's own
  // answer: never let that older view of the same cue replace the newer one (each
  // view names the last log row it includes).
  function newest(incoming, current) {
    if (!current || !incoming || incoming.cue_id !== current.cue_id) { return incoming; }
    return (incoming.last_log_id || 0) >= (current.last_log_id || 0) ? incoming : current;
  }

  var timer = null;
  function poll(now) {
    if (timer) { window.clearTimeout(timer); timer = null; }
    if (now !== true && document.hidden && view === "running-order") { timer = window.setTimeout(poll, pollMs); return; }
    // Ask for the night and the followed cue at once (one round trip, not two); fetch
    // another cue only when the night says the followed one changed.
    var guess = shownCue;
    var cueAsk = guess === null ? Promise.resolve(null)
      : api("GET", "/api/performances/" + pid + "/cues/" + guess);
    Promise.all([api("GET", "/api/performances/" + pid), cueAsk]).then(function (both) {
      var data = both[0];
      if (night && data.last_log_id < night.last_log_id) { data = night; }  // an answer overtaken
      night = data;
      lastContact = Date.now();
      var target = chooseCue(data);
      if (target === null) { cue = null; shownCue = null; return null; }
      shownCue = target;
      if (target === guess && both[1]) { cue = newest(both[1], cue); return null; }
      return api("GET", "/api/performances/" + pid + "/cues/" + target).then(function (c) {
        if (shownCue === target) { cue = newest(c, cue); }
      });
    }).then(function () {
      setLink(true);
      render();
    }, function (err) {
      setLink(false, err);
      render();
    }).then(function () {
      timer = window.setTimeout(poll, pollMs);
      if (queue.length) { flush(); }
    });
  }

  function myCueIds() {
    var raw = root.getAttribute("data-my-cues") || "";
    return raw ? raw.split(",").map(Number) : [];
  }

  var finishedNote = "";

  function chooseCue(data) {
    var i;
    for (i = 0; i < data.cues.length; i++) {
      var was = data.cues[i];
      if (was.cue_id === shownCue && (was.status === "complete" || was.status === "ended")) {
        finishedNote = "Cue " + was.number + " · " + was.name + (was.status === "complete" ? " complete." : " ended early.");
      }
    }
    if (data.live_cue) { finishedNote = ""; return data.live_cue; }
    if (view === "crew") {
      for (i = 0; i < data.cues.length; i++) { if (data.cues[i].next) { return data.cues[i].cue_id; } }
      // the next of this person's cues after the last one run, else the first not yet run
      var mine = myCueIds(), after = -1, first = null;
      for (i = 0; i < data.cues.length; i++) {
        var c = data.cues[i];
        if (c.status === "complete" || c.status === "ended") { after = i; }
      }
      for (i = 0; i < data.cues.length; i++) {
        var d = data.cues[i];
        if (mine.indexOf(d.cue_id) >= 0 && d.status === "waiting") {
          if (i > after) { return d.cue_id; }
          if (first === null) { first = d.cue_id; }
        }
      }
      return first;
    }
    // the running order keeps showing the last cue it followed (finished) until another starts
    return shownCue;
  }

  function setLink(ok, err) {
    var status = $("link-status");
    if (ok) {
      status.textContent = "Live · " + clock(new Date().toISOString());
      status.className = "link-status link-ok";
    } else if (err && err.status === 401) {
      status.textContent = "Signed out: sign in again";
      status.className = "link-status link-down";
    } else {
      status.textContent = "NO CONNECTION since " + (lastContact ? clock(new Date(lastContact).toISOString()) : "the page opened")
        + (err && err.status ? " (" + err.message + ")" : "");
      status.className = "link-status link-down";
    }
  }

  function showMessage(text, kind) {
    var box = $("action-message");
    if (!box) { return; }
    if (!text) { box.hidden = true; box.textContent = ""; return; }
    box.hidden = false;
    box.textContent = text;
    box.className = "message " + (kind === "ok" ? "message-ok" : "message-error");
  }

  // ---------------------------------------------------------------- drawing

  function stepByKey(key) {
    if (!cue || !key) { return null; }
    for (var i = 0; i < cue.steps.length; i++) { if (cue.steps[i].key === key) { return cue.steps[i]; } }
    return null;
  }

  // The roles this person holds on the followed cue tonight.
  function myRoles() {
    if (!cue || personId === null) { return []; }
    return cue.crew.filter(function (c) { return c.person_id === personId; }).map(function (c) { return c.role; });
  }

  function actsIn(step) {
    var roles = myRoles();
    if (roles.indexOf(step.by) >= 0) { return true; }
    // a performer's step is answered by the caller when no performer holds a screen
    var riderOnCrew = cue.crew.some(function (c) { return c.role === step.by; });
    return step.by === "rider" && !riderOnCrew && roles.indexOf("caller") >= 0;
  }

  function cueLabel(c) { return "Cue " + c.number + " · " + c.name; }

  function unsentFor(kind, step) {
    for (var i = 0; i < queue.length; i++) {
      if (queue[i].kind === kind && queue[i].step === step && queue[i].cue === shownCue) { return queue[i]; }
    }
    return null;
  }

  // A step is near when it is the current step or the one right after it.
  function standbyIsNear(step) {
    var current = stepByKey(cue.current_step);
    return !current || step.number <= current.number + 1;
  }

  // What the next press does, for this person: label, words, button.
  function nextAction() {
    if (!cue || !cue.next) { return null; }
    var n = cue.next;
    var step = stepByKey(n.step);
    var a = { kind: n.action, step: n.step, stepInfo: step, enabled: true, title: "", button: "", why: "" };
    if (n.action === "start") {
      a.title = "Start " + cueLabel(cue);
      a.button = "START CUE " + cue.number;
    } else if (n.action === "standby") {
      a.title = step.title;
      a.button = "STANDING BY";
      a.why = "Answer when you are ready for " + (step.go ? "the " + step.go + "'s go" : "this step") + ".";
    } else if (n.action === "go") {
      a.title = step.title;
      a.button = "GO: " + step.title;
    } else if (n.action === "wait") {
      a.title = step.title;
      a.enabled = false;
      if (step.go && step.waiting_standby && step.waiting_standby.length && step.go_at === null) {
        a.button = "Waiting for standing by";
        a.why = "Go is enabled when these have answered: " + step.waiting_standby.join(", ") + ".";
      } else {
        a.button = "Wait for the go";
        a.why = "Wait for the " + (step.go || "caller") + "'s go.";
      }
    } else if (n.action === "confirm") {
      a.title = step.title;
      a.button = "CONFIRM";
    } else if (n.action === "check") {
      a.title = "Check: " + step.title;
      a.button = "CHECKED";
      if (step.confirmed_by) {
        a.why = "Done by " + step.confirmed_by.name + " at " + clock(step.confirmed_at) + ". You are the second pair of eyes.";
      }
    }
    if (n.action === "standby" && !standbyIsNear(step)) {
      // Standing by means "ready now": answer it when the step is next, not steps ahead.
      return { kind: "later", step: n.step, stepInfo: step, enabled: false, title: step.title,
               button: "", why: "" };
    }
    if (unsentFor(a.kind, a.step)) { a.enabled = false; }
    if (cue.held && a.kind !== "start") { a.enabled = false; }
    return a;
  }

  function drawHold() {
    var banner = $("hold-banner");
    var holdButton = $("hold-button");
    var target = shownCue && cue && (cue.status === "running" || cue.status === "waiting" || cue.status === "held");
    if (holdButton) { holdButton.disabled = !target || (cue && cue.held); }
    if (!banner) { return; }
    if (cue && cue.held) {
      banner.hidden = false;
      banner.textContent = "";
      banner.appendChild(el("strong", "hold-word", "HOLD"));
      banner.appendChild(el("span", "hold-detail", cueLabel(cue) + " held by " + (cue.held_by || "?") + " at " + clock(cue.held_at)
        + ". Stop. Wait for the stage manager to resume."));
      document.body.classList.add("is-held");
    } else {
      banner.hidden = true;
      document.body.classList.remove("is-held");
    }
  }

  function drawPending() {
    var box = $("pending");
    var unsent = queue.filter(function (q) { return true; });
    var target = box || $("action-message");
    if (!box) {
      if (unsent.length && target) {
        target.hidden = false;
        target.className = "message message-pending";
        target.textContent = "NOT YET RECORDED: " + unsent.map(function (q) { return q.label; }).join("; ") + ". Sending again…";
      }
      return;
    }
    if (!unsent.length) { box.hidden = true; box.textContent = ""; return; }
    box.hidden = false;
    box.textContent = "";
    box.appendChild(el("strong", "pending-word", "NOT YET RECORDED"));
    unsent.forEach(function (q) { box.appendChild(el("span", "pending-item", q.label + " (pressed " + clock(q.device_at) + ")")); });
    box.appendChild(el("span", "pending-note", "No answer from the server yet. Keep this screen open: it is sent again by itself."));
  }

  function drawCard() {
    var title = $("card-title"), cueLine = $("card-cue"), words = $("card-words"), why = $("card-why");
    var button = $("confirm-button");
    if (!title) { return; }
    var a = nextAction();
    why.hidden = true;
    words.hidden = true;
    button.hidden = true;
    if (!cue) {
      cueLine.textContent = night ? night.production : "";
      title.textContent = "No cue for you right now";
      if (finishedNote) { why.hidden = false; why.textContent = "Last: " + finishedNote; }
      return;
    }
    var current = stepByKey(cue.current_step);
    cueLine.textContent = cueLabel(cue) + (current ? " · step " + current.number + " of " + cue.steps.length : "")
      + (cue.status === "waiting" ? " · not started" : "") + (cue.status === "complete" ? " · complete" : "");
    if (!a) {
      if (cue.status === "complete" || cue.status === "ended") {
        title.textContent = cue.status === "complete" ? "Cue complete" : "Cue ended";
      } else if (cue.status === "waiting") {
        title.textContent = "Waiting for the stage manager to start the cue";
        if (finishedNote) { why.hidden = false; why.textContent = "Last: " + finishedNote; }
      } else {
        title.textContent = current ? "Now: " + current.title : "Nothing for you now";
        if (current) {
          why.hidden = false;
          why.textContent = "Your next step comes after this one (" + (current.by || "") + ").";
        }
      }
      return;
    }
    if (a.kind === "later") {
      title.textContent = current ? "Now: " + current.title : "Nothing for you now";
      why.hidden = false;
      why.textContent = "Your next: " + a.title + ". Stand by when it is called.";
      return;
    }
    title.textContent = a.title;
    var step = a.stepInfo;
    if (step && (step.say || step.reply)) {
      words.hidden = false;
      $("card-say").textContent = step.say || "";
      $("card-say").parentNode.hidden = !step.say;
      $("card-reply").textContent = step.reply || "";
      $("card-reply").parentNode.hidden = !step.reply;
    }
    if (a.why) { why.hidden = false; why.textContent = a.why; }
    button.hidden = false;
    button.textContent = unsentFor(a.kind, a.step) ? "SENDING…" : a.button;
    button.disabled = !a.enabled;
    button.setAttribute("data-kind", a.kind);
    button.setAttribute("data-step", a.step || "");
    button.className = "confirm-button action-" + a.kind;
  }

  function stepStateText(s) {
    var parts = [];
    if (s.status === "waiting") { parts.push("waiting"); }
    if (s.status === "due") { parts.push("due" + (s.due_at ? " since " + clock(s.due_at) : "")); }
    if (s.standing_by && s.standing_by.length) {
      parts.push("standing by: " + s.standing_by.map(function (p) { return p.name; }).join(", "));
    }
    if (s.status === "due" && s.waiting_standby && s.waiting_standby.length) {
      parts.push("waiting for standing by from " + s.waiting_standby.join(", "));
    }
    if (s.go_at) { parts.push("go by " + (s.go_by || "?") + " at " + clock(s.go_at)); }
    if (s.confirmed_at) { parts.push("confirmed by " + s.confirmed_by.name + " at " + clock(s.confirmed_at)); }
    if (s.checked_at) { parts.push("checked by " + s.checked_by.name + " at " + clock(s.checked_at)); }
    else if (s.confirmed_at && s.check) { parts.push("waiting for the " + s.check + "'s check"); }
    return parts.join(" · ");
  }

  function drawSteps() {
    var list = $("live-steps");
    if (!list) { return; }
    var panel = $("live-cue");
    if (!cue) { panel.hidden = true; return; }
    panel.hidden = false;
    $("live-title").textContent = cueLabel(cue);
    var state = $("live-state");
    state.textContent = { waiting: "not started", running: "running", held: "HOLD", complete: "complete", ended: "ended early" }[cue.status] || cue.status;
    state.className = "live-state state-" + cue.status;
    list.textContent = "";
    cue.steps.forEach(function (s) {
      var li = el("li", "step step-" + s.status + (s.key === cue.current_step ? " step-current" : "") + (s.overdue_s ? " step-overdue" : ""));
      li.setAttribute("data-step", s.key);
      li.setAttribute("data-status", s.status);
      var head = el("div", "step-head");
      head.appendChild(el("span", "step-no", String(s.number)));
      head.appendChild(el("span", "step-title", s.title));
      var roles = (s.by || "") + (s.go ? " · go: " + s.go : "") + (s.check ? " · check: " + s.check : "") + (s.hold_s ? " · hold " + s.hold_s + " s" : "");
      head.appendChild(el("span", "step-roles", roles));
      li.appendChild(head);
      var line = el("div", "step-state", stepStateText(s));
      li.appendChild(line);
      if (canAct && cue.status !== "complete" && cue.status !== "ended" && !s.confirmed_at && actsIn(s)) {
        // The caller's own steps (and the riders' steps they answer for): the server
        // enforces the order, so a press out of turn is refused with the reason.
        var b = el("button", "quiet step-confirm", "Confirm step " + s.number);
        b.type = "button";
        b.setAttribute("data-confirm-step", s.key);
        b.disabled = !!unsentFor("confirm", s.key);
        li.appendChild(b);
      }
      if (s.overdue_s) {
        li.appendChild(el("div", "step-overdue-note", "OVERDUE: " + Math.round(s.overdue_s) + " s past its " + s.hold_s + " s hold"));
      }
      list.appendChild(li);
    });
    var resume = $("resume-button"), end = $("end-button");
    if (resume) { resume.hidden = !(canAct && cue.held); }
    if (end) { end.hidden = !(canAct && (cue.status === "running" || cue.status === "held")); }
    // the stage manager's own next press (as tonight's caller)
    var box = $("my-next");
    if (box) {
      var a = nextAction();
      if (a && a.kind === "later") { a = null; }
      box.textContent = "";
      box.hidden = !a;
      if (a) {
        box.appendChild(el("span", "my-next-label", "Your next"));
        box.appendChild(el("span", "my-next-title", a.title));
        if (a.stepInfo && a.stepInfo.say) { box.appendChild(el("q", "my-next-say", a.stepInfo.say)); }
        if (a.why) { box.appendChild(el("span", "my-next-why", a.why)); }
        var b = el("button", "primary big action-" + a.kind, a.button);
        b.type = "button";
        b.disabled = !a.enabled;
        b.id = "my-next-button";
        b.setAttribute("data-kind", a.kind);
        b.setAttribute("data-step", a.step || "");
        box.appendChild(b);
      }
    }
  }

  function drawRunningOrder() {
    if (!night || !$("running-order")) { return; }
    var anyLive = !!night.live_cue;
    night.cues.forEach(function (c) {
      var status = document.querySelector('[data-status-for="' + c.cue_id + '"]');
      if (status) {
        var text = { waiting: "not started", running: "running", held: "HOLD", complete: "complete", ended: "ended early" }[c.status] || "—";
        if (c.current_step && (c.status === "running" || c.status === "held")) { text += " · step " + c.current_step.number + ": " + c.current_step.title; }
        status.textContent = text;
        status.className = "status-text status-" + (c.status || "none");
      }
      var start = document.querySelector('[data-start="' + c.cue_id + '"]');
      if (start && c.verdict !== "blocked") {
        start.hidden = !(canAct && c.status === "waiting");
        start.disabled = anyLive || !!unsentFor("start", null);
      }
    });
    var so = $("signoff-state");
    if (so) { so.textContent = night.signed_off ? "Signed off at " + clock(night.signed_off_at) : ""; }
    var sob = $("signoff-button");
    if (sob) { sob.disabled = night.signed_off || anyLive; }
  }

  // When this screen first showed each new log row (for measuring how fast news travels).
  var seen = [];
  var lastPress = null;

  function render() {
    if (night) {
      root.setAttribute("data-last-log-id", String(night.last_log_id));
      if (!seen.length || night.last_log_id > seen[seen.length - 1][0]) {
        seen.push([night.last_log_id, Date.now()]);
        if (seen.length > 500) { seen.shift(); }
      }
    }
    drawHold();
    drawCard();
    drawSteps();
    drawRunningOrder();
    drawPending();
  }

  // ---------------------------------------------------------------- presses

  function labelFor(kind, step) {
    var s = stepByKey(step);
    var name = s ? "step " + s.number + " '" + s.title + "'" : (cue ? cueLabel(cue) : "");
    return { standby: "Standing by for ", go: "Go for ", confirm: "Confirm ", check: "Check of ", start: "Start of ",
             hold: "HOLD on ", resume: "Resume of ", end: "End of " }[kind] + name;
  }

  document.addEventListener("click", function (event) {
    var target = event.target.closest("button");
    if (!target || target.disabled) { return; }
    if (target.id === "confirm-button" || target.id === "my-next-button") {
      var kind = target.getAttribute("data-kind");
      var step = target.getAttribute("data-step") || null;
      if (kind === "wait") { return; }
      act(kind, shownCue, step, labelFor(kind, step));
    } else if (target.hasAttribute("data-confirm-step")) {
      var key = target.getAttribute("data-confirm-step");
      act("confirm", shownCue, key, labelFor("confirm", key));
    } else if (target.id === "hold-button") {
      if (shownCue) { act("hold", shownCue, null, "HOLD on " + (cue ? cueLabel(cue) : "the cue")); }
    } else if (target.id === "resume-button") {
      act("resume", shownCue, null, labelFor("resume", null));
    } else if (target.id === "end-button") {
      var why = window.prompt("End " + (cue ? cueLabel(cue) : "this cue") + " early. Why? (goes in the log)");
      if (why) { act("end", shownCue, null, labelFor("end", null), { note: why }); }
    } else if (target.hasAttribute("data-start")) {
      var id = Number(target.getAttribute("data-start"));
      shownCue = id;
      act("start", id, null, "Start of cue " + (target.closest("tr").querySelector(".cue-number") || {}).textContent);
    } else if (target.id === "signoff-button") {
      var note = window.prompt("Sign off the night. A note for the show report (optional):", "");
      if (note !== null) { act("signoff", null, null, "Sign-off of the night", { note: note }); }
    }
  });

  window.addEventListener("online", function () { flush(); poll(true); });
  window.showopsLive = {
    queue: function () { return queue.slice(); },
    poll: poll,
    lastPress: function () { return lastPress; },
    // the time (ms since the epoch) this screen first showed log row ``id`` or a later one
    seenAt: function (id) {
      for (var i = 0; i < seen.length; i++) { if (seen[i][0] >= id) { return seen[i][1]; } }
      return null;
    }
  };
  render();
  poll(true);
  if (queue.length) { flush(); }
})();
