// The rating packet's code: shows one pair at a time, keeps ratings in the
// browser's storage, and exports them as a ratings file. Every value from
// the data reaches the page through textContent or a property, never as
// markup. It makes no network request (and the page's policy forbids one).
//
// Nothing confirmed is lost: a rating is confirmed when its point is chosen
// (key or click), and it is written to storage synchronously, before the
// screen shows it as rated, so a reload, a closed tab or a crashed page
// finds it again. A comment is written on every keystroke; a comment on a
// pair with no rating yet is kept but is not a rating and is not exported.
// Storage holds this reviewer's ratings, comments, position and the marks
// setting, never the notes (they are in this file already).
//
// "Exported" means: the last ratings file saved held every rating and
// comment as they are now (each change counts up `changed`; an export sets
// `exported` to it). Until then, closing the page asks first. The browser
// cannot tell the page whether the user then kept the file, so an export is
// taken at its word.
(function () {
  'use strict';

  var data = JSON.parse(document.getElementById('packet-data').textContent);
  var pairs = data.pairs;
  var n = pairs.length;
  var scale = data.scale;
  var known = {};
  pairs.forEach(function (p) { known[p.key] = true; });
  var storeKey = 'pairsight-packet:' + data.round + ':' + data.reviewer;

  function $(id) { return document.getElementById(id); }

  // Storage may be missing or refused (private windows, locked-down
  // settings); the packet then still works but cannot resume.
  var store = null;
  try {
    store = window.localStorage;
    store.getItem(storeKey);
  } catch (e) {
    store = null;
  }

  var state = { at: 0, ratings: {}, changed: 0, exported: 0, marks: !!data.marks_on };

  function validRating(v) {
    return typeof v === 'number' && Math.floor(v) === v && v >= scale.min && v <= scale.max;
  }

  function parse(text) {
    var saved = null;
    try { saved = JSON.parse(text || 'null'); } catch (e) { saved = null; }
    return saved && typeof saved === 'object' ? saved : null;
  }

  function ratingsOf(saved) {
    var out = {};
    if (!saved.ratings || typeof saved.ratings !== 'object') return out;
    Object.keys(saved.ratings).forEach(function (k) {
      var r = saved.ratings[k];
      if (!known[k] || !r || typeof r !== 'object') return;
      out[k] = {
        rating: validRating(r.rating) ? r.rating : null,
        comment: typeof r.comment === 'string' ? r.comment : '',
        time: typeof r.time === 'string' ? r.time : ''
      };
    });
    return out;
  }

  function load() {
    if (!store) return;
    var saved = parse(store.getItem(storeKey));
    if (!saved) return;
    state.ratings = ratingsOf(saved);
    if (typeof saved.at === 'number' && saved.at >= 0 && saved.at < n) state.at = Math.floor(saved.at);
    if (typeof saved.changed === 'number') state.changed = saved.changed;
    if (typeof saved.exported === 'number') state.exported = saved.exported;
    if (typeof saved.marks === 'boolean') state.marks = saved.marks;
  }

  // The same packet open in a second tab writes the same storage: take its
  // ratings as they arrive, so neither tab later overwrites the other's.
  // Position and the marks setting stay this tab's own.
  function adopt(text) {
    var saved = parse(text);
    if (!saved) return;
    state.ratings = ratingsOf(saved);
    if (typeof saved.changed === 'number') state.changed = Math.max(state.changed, saved.changed);
    if (typeof saved.exported === 'number') state.exported = saved.exported;
    render();
  }

  // Synchronous: when this returns true the change is in storage. False
  // means it could not be kept, and the reviewer is told at once.
  var unsavedWarning = 'Your ratings could not be kept in this browser. Export them now so nothing is lost.';
  function save() {
    if (!store) return false;
    try {
      store.setItem(storeKey, JSON.stringify(state));
      return true;
    } catch (e) {
      say(unsavedWarning);
      return false;
    }
  }

  function say(text) { $('status').textContent = text; }

  function ratedCount() {
    var c = 0;
    pairs.forEach(function (p) {
      var r = state.ratings[p.key];
      if (r && r.rating !== null) c += 1;
    });
    return c;
  }

  function renderNote(el, text, marks) {
    el.textContent = '';
    el.classList.toggle('empty', text.length === 0);
    if (text.length === 0) {
      el.textContent = '(no note)';
      return;
    }
    if (!state.marks || !marks || marks.length === 0) {
      el.textContent = text;
      return;
    }
    // Offsets are UTF-16 code units, as JavaScript strings count them.
    var sorted = marks.slice().sort(function (a, b) { return a.start - b.start || b.end - a.end; });
    var pos = 0;
    sorted.forEach(function (m) {
      if (m.start < pos || m.end <= m.start || m.end > text.length) return;
      if (m.start > pos) el.appendChild(document.createTextNode(text.slice(pos, m.start)));
      var mark = document.createElement('mark');
      mark.className = m.negated ? 'neg' : 'pos';
      mark.title = m.concept + (m.negated ? ' (negated mention)' : '');
      mark.textContent = text.slice(m.start, m.end);
      el.appendChild(mark);
      pos = m.end;
    });
    if (pos < text.length) el.appendChild(document.createTextNode(text.slice(pos)));
  }

  function renderFields(el, values) {
    el.textContent = '';
    el.hidden = data.fields.length === 0;
    data.fields.forEach(function (name, i) {
      var dt = document.createElement('dt');
      dt.textContent = name;
      var dd = document.createElement('dd');
      dd.textContent = values[i] === '' ? '(missing)' : values[i];
      el.appendChild(dt);
      el.appendChild(dd);
    });
  }

  function render() {
    var p = pairs[state.at];
    var r = state.ratings[p.key] || { rating: null, comment: '', time: '' };
    renderFields($('fields-left'), p.left.fields);
    renderFields($('fields-right'), p.right.fields);
    renderNote($('note-left'), p.left.note, p.left.marks);
    renderNote($('note-right'), p.right.note, p.right.marks);
    var buttons = document.querySelectorAll('.point');
    for (var i = 0; i < buttons.length; i += 1) {
      var v = Number(buttons[i].getAttribute('data-value'));
      buttons[i].setAttribute('aria-pressed', r.rating === v ? 'true' : 'false');
    }
    var comment = $('comment');
    if (comment && document.activeElement !== comment) comment.value = r.comment;
    var done = ratedCount();
    $('progress').value = done;
    $('progress-text').textContent = done + ' of ' + n + ' rated';
    $('position').textContent = 'Pair ' + (state.at + 1) + ' of ' + n;
    $('pair-key').textContent = p.key;
    $('prev').disabled = state.at === 0;
    $('next').disabled = state.at === n - 1;
    $('marks-toggle').checked = state.marks;
  }

  function now() { return new Date().toISOString(); }

  function entry(key) {
    if (!state.ratings[key]) state.ratings[key] = { rating: null, comment: '', time: '' };
    return state.ratings[key];
  }

  function rate(v) {
    if (!validRating(v)) return;
    var e = entry(pairs[state.at].key);
    e.rating = v;
    e.time = now();
    state.changed += 1;
    var kept = save();
    render();
    var left = n - ratedCount();
    if (store && !kept) {
      say('Rated ' + v + ', but ' + unsavedWarning.charAt(0).toLowerCase() + unsavedWarning.slice(1));
      return;
    }
    say(left === 0
      ? 'All ' + n + ' pairs are rated. Export your ratings and send the file to the study team.'
      : 'Rated ' + v + '. ' + left + ' to go.');
  }

  function move(to) {
    if (to < 0 || to >= n) return;
    state.at = to;
    save();
    say('');
    render();
  }

  function nextUnrated() {
    for (var step = 1; step <= n; step += 1) {
      var i = (state.at + step) % n;
      var r = state.ratings[pairs[i].key];
      if (!r || r.rating === null) { move(i); return; }
    }
    say('Every pair is rated.');
  }

  // Cells are neutralised against spreadsheet formulas the same way the
  // analyst's tools write them, then quoted as RFC 4180 requires.
  function cell(value) {
    var s = String(value);
    var triggers = '=+-@\t\r';
    if (s.length > 0 && triggers.indexOf(s.charAt(0)) >= 0) {
      s = "'" + s;
    } else if (s.length > 1 && s.charAt(0) === "'" && (triggers + "'").indexOf(s.charAt(1)) >= 0) {
      s = "'" + s;
    }
    if (/[",\r\n]/.test(s)) s = '"' + s.replace(/"/g, '""') + '"';
    return s;
  }

  function ratingsCsv() {
    var lines = ['round_id,pair_key,reviewer,rating,comment,time'];
    pairs.forEach(function (p) {
      var r = state.ratings[p.key];
      if (!r || r.rating === null) return;
      lines.push([data.round, p.key, data.reviewer, String(r.rating), r.comment, r.time].map(cell).join(','));
    });
    return { text: lines.join('\r\n') + '\r\n', count: lines.length - 1 };
  }

  function exportRatings() {
    var csv = ratingsCsv();
    // A file of only the header would reach the study team as "no ratings".
    if (csv.count === 0) {
      say('No pair is rated yet, so there is nothing to export: rate at least one pair (keys ' + scale.min + ' to ' + scale.max + ', or the buttons), then export.');
      return;
    }
    var blob = new Blob([csv.text], { type: 'text/csv;charset=utf-8' });
    var url = URL.createObjectURL(blob);
    var a = document.createElement('a');
    a.href = url;
    a.download = 'ratings-' + data.reviewer + '-' + data.round + '.csv';
    document.body.appendChild(a);
    a.click();
    a.remove();
    setTimeout(function () { URL.revokeObjectURL(url); }, 10000);
    state.exported = state.changed;
    save();
    say('Exported ' + csv.count + ' of ' + n + ' ratings to ' + a.download + '. Send that file, not this packet, to the study team.');
  }

  load();
  if (!store) {
    $('storage-warning').hidden = false;
  }
  var comment = $('comment');
  if (comment) {
    comment.addEventListener('input', function () {
      var e = entry(pairs[state.at].key);
      e.comment = comment.value;
      if (e.rating !== null) e.time = now();
      state.changed += 1;
      save();
    });
  }
  var buttons = document.querySelectorAll('.point');
  for (var i = 0; i < buttons.length; i += 1) {
    buttons[i].addEventListener('click', function (ev) {
      rate(Number(ev.currentTarget.getAttribute('data-value')));
    });
  }
  $('prev').addEventListener('click', function () { move(state.at - 1); });
  $('next').addEventListener('click', function () { move(state.at + 1); });
  $('next-unrated').addEventListener('click', nextUnrated);
  $('export').addEventListener('click', exportRatings);
  $('marks-toggle').addEventListener('change', function (ev) {
    state.marks = ev.currentTarget.checked;
    save();
    render();
  });
  document.addEventListener('keydown', function (ev) {
    if (ev.ctrlKey || ev.metaKey || ev.altKey) return;
    var t = ev.target;
    if (t && (t.tagName === 'TEXTAREA' || t.tagName === 'INPUT')) {
      if (ev.key === 'Escape') t.blur();
      return;
    }
    if (/^[0-9]$/.test(ev.key)) {
      var v = Number(ev.key);
      if (validRating(v)) { ev.preventDefault(); rate(v); }
    } else if (ev.key === 'ArrowRight' || ev.key === 'n') {
      ev.preventDefault(); move(state.at + 1);
    } else if (ev.key === 'ArrowLeft' || ev.key === 'p') {
      ev.preventDefault(); move(state.at - 1);
    } else if (ev.key === 'u') {
      ev.preventDefault(); nextUnrated();
    }
  });
  window.addEventListener('beforeunload', function (ev) {
    if (state.changed > state.exported) {
      ev.preventDefault();
      ev.returnValue = '';
      return '';
    }
    return undefined;
  });
  window.addEventListener('storage', function (ev) {
    if (ev.key === storeKey && ev.storageArea === store && n > 0) adopt(ev.newValue);
  });
  $('app').hidden = false;
  if (n === 0) {
    say('This packet holds no pairs.');
    return;
  }
  render();
  var done = ratedCount();
  if (done > 0) say('Welcome back: ' + done + ' of ' + n + ' pairs were already rated.');
})();
