/* clearway roadmap viewer: draws the embedded roadmap on a canvas; no network, no libraries.
   Every string from the drawing is shown with textContent or canvas fillText, never as markup. */
(function () {
"use strict";

var data = JSON.parse(document.getElementById("roadmap-data").textContent);
var OX = data.origin[0], OY = data.origin[1];
// Okabe-Ito colours, as in the SVG preview
var INK = "#000000", ORANGE = "#E69F00", SKY = "#56B4E9", GREEN = "#009E73", YELLOW = "#F0E442",
    BLUE = "#0072B2", VERMILLION = "#D55E00", PURPLE = "#CC79A7";

function el(id) { return document.getElementById(id); }
function fixed(value, digits) { return value === null || value === undefined ? "unknown" : value.toFixed(digits); }
function metres(value) { return value === null || value === undefined ? "unknown" : value.toFixed(2) + " m"; }

/* ---------- the lane graph, built in the order read_graphml builds it ---------- */
var nodeCount = data.nodes.length, edgeCount = data.edges.length;
var nodeIndex = new Map();
var nx_ = new Float64Array(nodeCount), ny_ = new Float64Array(nodeCount);
data.nodes.forEach(function (n, i) { nodeIndex.set(n[0], i); nx_[i] = n[1]; ny_[i] = n[2]; });
var edgeSource = new Int32Array(edgeCount), edgeTarget = new Int32Array(edgeCount);
data.edges.forEach(function (e, i) { edgeSource[i] = nodeIndex.get(e[1]); edgeTarget[i] = nodeIndex.get(e[2]); });

// networkx MultiGraph adjacency: node -> Map(neighbour -> [edge, ...]), insertion ordered
var multi = [];
for (var i = 0; i < nodeCount; i++) multi.push(new Map());
for (var e = 0; e < edgeCount; e++) {
  var u = edgeSource[e], v = edgeTarget[e], keys = multi[u].get(v);
  if (!keys) { keys = []; multi[u].set(v, keys); multi[v].set(u, keys); }
  keys.push(e);
}
// routing.lightest_edges: parallel lanes collapse to the lightest (then the smallest id)
var simple = [];
for (i = 0; i < nodeCount; i++) simple.push(new Map());
(function () {
  var seen = new Uint8Array(nodeCount);
  for (var n = 0; n < nodeCount; n++) {
    multi[n].forEach(function (keys, nbr) {
      if (seen[nbr]) return;
      keys.forEach(function (edge) {
        if (n === nbr) return;
        var weight = data.edges[edge][4], id = data.edges[edge][0], old = simple[n].get(nbr);
        if (!old || weight < old.weight || (weight === old.weight && id < data.edges[old.edge][0])) {
          var item = { weight: weight, edge: edge };
          simple[n].set(nbr, item); simple[nbr].set(n, item);
        }
      });
    });
    seen[n] = 1;
  }
})();
// routing._heuristic: straight line, scaled down so that it never overestimates
var heuristicScale = (function () {
  var scale = 1.0;
  for (var edge = 0; edge < edgeCount; edge++) {
    var a = edgeSource[edge], b = edgeTarget[edge];
    var straight = Math.hypot(nx_[a] - nx_[b], ny_[a] - ny_[b]);
    if (straight > 0) scale = Math.min(scale, data.edges[edge][4] / straight);
  }
  return scale;
})();

function heapPush(heap, item) {
  heap.push(item);
  var k = heap.length - 1;
  while (k > 0) {
    var p = (k - 1) >> 1;
    if (!before(heap[k], heap[p])) break;
    var t = heap[k]; heap[k] = heap[p]; heap[p] = t; k = p;
  }
}
function heapPop(heap) {
  var top = heap[0], last = heap.pop();
  if (heap.length) {
    heap[0] = last;
    var k = 0;
    for (;;) {
      var l = 2 * k + 1, r = l + 1, m = k;
      if (l < heap.length && before(heap[l], heap[m])) m = l;
      if (r < heap.length && before(heap[r], heap[m])) m = r;
      if (m === k) break;
      var t = heap[k]; heap[k] = heap[m]; heap[m] = t; k = m;
    }
  }
  return top;
}
function before(a, b) {      // Python tuple order on the leading numbers
  return a[0] < b[0] || (a[0] === b[0] && (a[1] < b[1] || (a[1] === b[1] && a[2] < b[2])));
}

/* A* as networkx.astar_path runs it on routing.lightest_edges, so ties break alike. */
function shortestRoute(source, target) {
  var goalX = nx_[target], goalY = ny_[target], counter = 0;
  var heap = [[0, counter++, source, 0, -1]];
  var explored = new Int32Array(nodeCount).fill(-2);     // -2 not yet, -1 the start
  var queued = new Float64Array(nodeCount).fill(NaN), queuedH = new Float64Array(nodeCount);
  while (heap.length) {
    var item = heapPop(heap), node = item[2], dist = item[3], parent = item[4];
    if (node === target) {
      var path = [node];
      for (var p = parent; p !== -1; p = explored[p]) path.push(p);
      return makeRoute(path.reverse());
    }
    if (explored[node] !== -2) {
      if (explored[node] === -1) continue;
      if (queued[node] < dist) continue;
    }
    explored[node] = parent;
    simple[node].forEach(function (lane, nbr) {
      var cost = dist + lane.weight, h;
      if (!isNaN(queued[nbr])) {
        if (queued[nbr] <= cost) return;
        h = queuedH[nbr];
      } else {
        h = heuristicScale * Math.hypot(nx_[nbr] - goalX, ny_[nbr] - goalY);
      }
      queued[nbr] = cost; queuedH[nbr] = h;
      heapPush(heap, [cost + h, counter++, nbr, cost, node]);
    });
  }
  return null;
}
/* Allowed turns (node attribute "turns": "EDGE:EDGE ..." pairs, either order; a node
   without it allows every turn). When any node has them, routes are searched as
   routing._turn_search does: over (node, lane arrived by) states, lanes in MultiGraph order. */
var turnRules = null;
data.nodes.forEach(function (n, index) {
  if (n[6] === null || n[6] === undefined) return;
  var allowed = new Set();
  n[6].split(/\s+/).forEach(function (item) {
    var cut = item.indexOf(":");
    if (cut > 0) { allowed.add(item.slice(0, cut) + "\u0000" + item.slice(cut + 1)); allowed.add(item.slice(cut + 1) + "\u0000" + item.slice(0, cut)); }
  });
  turnRules = turnRules || new Map();
  turnRules.set(index, allowed);
});
function turnRoute(source, target) {
  var goalX = nx_[target], goalY = ny_[target], counter = 1;
  var cost = new Map(), parent = new Map(), start = source + "|";
  cost.set(start, 0);
  var heap = [[0, 0, 0, source, -1, start]];         // guess, spent, counter, node, arrived lane
  while (heap.length) {
    var item = heapPop(heap), spent = item[1], node = item[3], arrived = item[4], state = item[5];
    if (spent > (cost.has(state) ? cost.get(state) : Infinity)) continue;
    if (node === target) {
      var nodes = [node], lanes = [];
      while (parent.has(state)) { var back = parent.get(state); state = back[0]; nodes.push(back[1]); lanes.push(back[2]); }
      return routeOf(nodes.reverse(), lanes.reverse());
    }
    var allowed = turnRules.get(node);
    multi[node].forEach(function (lanesTo, other) {
      if (other === node) return;
      lanesTo.forEach(function (lane) {
        if (arrived !== -1 && allowed !== undefined && !allowed.has(data.edges[arrived][0] + "\u0000" + data.edges[lane][0])) return;
        var step = other + "|" + lane, total = spent + data.edges[lane][4];
        if (total < (cost.has(step) ? cost.get(step) : Infinity)) {
          cost.set(step, total); parent.set(step, [state, node, lane]);
          var guess = total + heuristicScale * Math.hypot(nx_[other] - goalX, ny_[other] - goalY);
          heapPush(heap, [guess, total, counter++, other, lane, step]);
        }
      });
    });
  }
  return null;
}
function makeRoute(path) {
  var edges = [];
  for (var k = 0; k + 1 < path.length; k++) edges.push(simple[path[k]].get(path[k + 1]).edge);
  return routeOf(path, edges);
}
function routeOf(path, lanes) {
  var length = 0, narrowest = Infinity, edges = [];
  path.forEach(function (n) { var c = data.nodes[n][5]; if (c !== null && c < narrowest) narrowest = c; });
  for (var k = 0; k + 1 < path.length; k++) {
    var edge = lanes[k], row = data.edges[edge];
    edges.push(edge);
    length += row[3];
    if (row[5] !== null && row[5] < narrowest) narrowest = row[5];
  }
  return { nodes: path, edges: edges, length: length, clearance: isFinite(narrowest) ? narrowest : null };
}

/* ---------- the view: local metres (origin subtracted, y up) to CSS pixels ---------- */
var canvas = el("plan"), ctx = canvas.getContext("2d"), box = el("plan-box");
var view = { cx: 0, cy: 0, scale: 1, width: 1, height: 1, ratio: 1 };
var B = data.bounds;
function fit() {
  var w = Math.max(B[2] - B[0], 1e-3), h = Math.max(B[3] - B[1], 1e-3);
  view.scale = Math.min(view.width / w, view.height / h) * 0.94;
  view.cx = (B[0] + B[2]) / 2; view.cy = (B[1] + B[3]) / 2;
  request();
}
function toScreen(x, y) { return [(x - view.cx) * view.scale + view.width / 2, (view.cy - y) * view.scale + view.height / 2]; }
function toLocal(px, py) { return [(px - view.width / 2) / view.scale + view.cx, view.cy - (py - view.height / 2) / view.scale]; }
function zoomAt(factor, px, py) {
  var before = toLocal(px, py);
  var span = Math.max(B[2] - B[0], B[3] - B[1], 1);
  view.scale = Math.min(Math.max(view.scale * factor, 0.2 * Math.min(view.width, view.height) / span), 4000);
  var after = toLocal(px, py);
  view.cx += before[0] - after[0]; view.cy += before[1] - after[1];
  request();
}
function centreOn(x, y, scale) { view.cx = x; view.cy = y; if (scale) view.scale = scale; request(); }
function visible() { var a = toLocal(0, view.height), b = toLocal(view.width, 0); return [a[0], a[1], b[0], b[1]]; }

/* ---------- drawable geometry, cut into tiles so that only what is in view is drawn ---------- */
var GRID = 24;
function tileKey(x, y) {
  var gx = Math.floor((x - B[0]) / Math.max(B[2] - B[0], 1e-9) * GRID), gy = Math.floor((y - B[1]) / Math.max(B[3] - B[1], 1e-9) * GRID);
  return Math.min(Math.max(gx, 0), GRID - 1) * GRID + Math.min(Math.max(gy, 0), GRID - 1);
}
/* A shape (a polygon with its holes, or a lane) goes whole into the tile of its centre, so
   that holes stay with their polygon; each tile keeps a full path and a coarse one (points
   closer than COARSE metres to the last one kept are dropped) for zoomed-out pictures. */
var COARSE = 0.08, COARSE_BELOW = 6;      // metres; used below this many pixels per metre
function Tiles() { this.map = new Map(); this.list = []; }
Tiles.prototype.add = function (rings, closed) {
  var x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
  rings.forEach(function (flat) {
    for (var k = 0; k < flat.length; k += 2) {
      if (flat[k] < x0) x0 = flat[k]; if (flat[k] > x1) x1 = flat[k];
      if (flat[k + 1] < y0) y0 = flat[k + 1]; if (flat[k + 1] > y1) y1 = flat[k + 1];
    }
  });
  var key = tileKey((x0 + x1) / 2, (y0 + y1) / 2), tile = this.map.get(key);
  if (!tile) { tile = { path: new Path2D(), coarse: new Path2D(), box: [x0, y0, x1, y1] }; this.map.set(key, tile); this.list.push(tile); }
  var b = tile.box;
  b[0] = Math.min(b[0], x0); b[1] = Math.min(b[1], y0); b[2] = Math.max(b[2], x1); b[3] = Math.max(b[3], y1);
  rings.forEach(function (flat) {
    var n = flat.length;
    tile.path.moveTo(flat[0], flat[1]); tile.coarse.moveTo(flat[0], flat[1]);
    var lastX = flat[0], lastY = flat[1];
    for (var k = 2; k < n; k += 2) {
      tile.path.lineTo(flat[k], flat[k + 1]);
      if (k + 2 >= n || Math.abs(flat[k] - lastX) + Math.abs(flat[k + 1] - lastY) >= COARSE) {
        tile.coarse.lineTo(flat[k], flat[k + 1]); lastX = flat[k]; lastY = flat[k + 1];
      }
    }
    if (closed) { tile.path.closePath(); tile.coarse.closePath(); }
  });
};
Tiles.prototype.each = function (view, callback) {
  var coarse = view.scale < COARSE_BELOW;
  for (var k = 0; k < this.list.length; k++) {
    var b = this.list[k].box;
    if (b[2] >= view.x0 && b[0] <= view.x1 && b[3] >= view.y0 && b[1] <= view.y1) callback(coarse ? this.list[k].coarse : this.list[k].path);
  }
};
function polygonTiles(polygons) {
  var tiles = new Tiles();
  polygons.forEach(function (rings) { tiles.add(rings, true); });
  return tiles;
}

var AREA_STYLES = {
  free: { name: "Free floor", fill: "#F7F7F2" },
  drivable: { name: "Drivable floor", fill: "rgba(0,158,115,0.10)", stroke: GREEN, width: 1 },
  band: { name: "Clearance band", fill: "rgba(86,180,233,0.30)" },
  shared: { name: "Shared with people", fill: "rgba(240,228,66,0.45)", stroke: "#8A7F00", width: 1.5, dash: [6, 3] },
  boundary: { name: "Boundary", fill: "#8C8C8C", stroke: "#4D4D4D", width: 1 },
  wall: { name: "Walls", fill: "#333333", stroke: INK, width: 1 },
  racking: { name: "Racking", fill: "rgba(0,114,178,0.55)", stroke: BLUE, width: 1 },
  keepout: { name: "Keep-out areas", fill: "rgba(213,94,0,0.22)", stroke: VERMILLION, width: 2, dash: [8, 4] }
};
var OPENING_COLOURS = { door: GREEN, open: SKY, window: BLUE, closed: VERMILLION };
var AREA_ORDER = ["free", "drivable", "band", "shared", "boundary", "wall", "racking", "keepout"];
var areaTiles = {};
AREA_ORDER.forEach(function (role) { if (data.areas[role]) areaTiles[role] = polygonTiles(data.areas[role]); });

var laneBins = data.lane_classes.bins, laneColours = data.lane_classes.colours;
function laneClass(clearance) {
  if (clearance === null) return 0;
  var k = 0;
  while (k + 1 < laneBins.length && clearance >= laneBins[k + 1]) k++;
  return k;
}
var laneTiles = laneColours.map(function () { return new Tiles(); });
data.edges.forEach(function (row) { laneTiles[laneClass(row[5])].add([row[6]], false); });

var roomTiles = polygonTiles([].concat.apply([], data.rooms.map(function (room) { return room.polygons; })));
var changeTiles = null;
if (data.changes) {
  changeTiles = { added: new Tiles(), removed: new Tiles() };
  data.changes.lanes_added.forEach(function (row) { changeTiles.added.add([row[1]], false); });
  data.changes.lanes_removed.forEach(function (row) { changeTiles.removed.add([row[1]], false); });
}

/* ---------- layers ---------- */
var layers = [];
function addLayer(key, name, swatch, on) { layers.push({ key: key, name: name, swatch: swatch, on: on !== false }); }
AREA_ORDER.forEach(function (role) {
  if (areaTiles[role]) addLayer("area-" + role, AREA_STYLES[role].name, AREA_STYLES[role].fill, role !== "drivable");
});
if (data.rooms.length) addLayer("rooms", "Rooms", "rgba(204,121,167,0.25)");
if (data.openings.length) addLayer("openings", "Doors and openings", ORANGE);
addLayer("lanes", "Lanes by clearance", laneColours[laneColours.length - 1]);
var NODE_KINDS = ["waypoint", "link", "end", "junction", "station"], nodesByKind = {};
NODE_KINDS.forEach(function (kind) { nodesByKind[kind] = []; });
data.nodes.forEach(function (n, index) { if (nodesByKind[n[3]]) nodesByKind[n[3]].push(index); });
var KIND_NAMES = { junction: "Junctions", end: "Lane ends", station: "Station nodes", link: "Station links", waypoint: "Waypoints" };
var kindsPresent = {};
data.nodes.forEach(function (n) { kindsPresent[n[3]] = true; });
["junction", "end", "link", "waypoint", "station"].forEach(function (kind) {
  if (kindsPresent[kind]) addLayer("node-" + kind, KIND_NAMES[kind], kind === "junction" ? INK : "#ffffff", kind === "junction" || kind === "end");
});
addLayer("stations", "Stations", GREEN);
addLayer("problems", "Problems", PURPLE);
if (data.changes) addLayer("changes", "Changes since previous revision", ORANGE);
function layerOn(key) { for (var k = 0; k < layers.length; k++) if (layers[k].key === key) return layers[k].on; return false; }

(function buildLayerList() {
  var list = el("layers");
  layers.forEach(function (layer) {
    var label = document.createElement("label"), box = document.createElement("input"), swatch = document.createElement("span");
    label.className = "layer";
    box.type = "checkbox"; box.checked = layer.on; box.dataset.layer = layer.key;
    box.addEventListener("change", function () { layer.on = box.checked; request(); });
    swatch.className = "swatch"; swatch.style.background = layer.swatch;
    label.appendChild(box); label.appendChild(swatch); label.appendChild(document.createTextNode(layer.name));
    list.appendChild(label);
  });
})();

/* ---------- drawing ---------- */
var highlight = null, hovered = null, route = null, routeEnds = [];
var stats = { frames: 0, lastFrameMs: 0, firstPicture: null };
function symbol(kind, x, y, size) {
  var s = size;
  ctx.beginPath();
  if (kind === "junction" || kind === "end" || kind === "waypoint" || kind === "link") {
    ctx.arc(x, y, kind === "junction" ? 0.36 * s : 0.28 * s, 0, 2 * Math.PI);
    ctx.fillStyle = kind === "junction" ? INK : "#ffffff"; ctx.strokeStyle = kind === "junction" ? "#ffffff" : INK;
    ctx.lineWidth = 1.2; ctx.fill(); ctx.stroke();
  } else if (kind === "station" || kind === "unreachable") {
    var h = 0.55 * s;
    ctx.rect(x - h, y - h, 2 * h, 2 * h);
    ctx.fillStyle = kind === "station" ? GREEN : "#ffffff"; ctx.strokeStyle = kind === "station" ? "#ffffff" : VERMILLION;
    ctx.lineWidth = 2; ctx.fill(); ctx.stroke();
    if (kind === "unreachable") { ctx.beginPath(); ctx.moveTo(x - h, y - h); ctx.lineTo(x + h, y + h); ctx.moveTo(x - h, y + h); ctx.lineTo(x + h, y - h); ctx.stroke(); }
  } else if (kind === "pinch") {
    h = 0.7 * s;
    ctx.moveTo(x, y - h); ctx.lineTo(x + h, y + 0.6 * h); ctx.lineTo(x - h, y + 0.6 * h); ctx.closePath();
    ctx.fillStyle = PURPLE; ctx.strokeStyle = INK; ctx.lineWidth = 1.2; ctx.fill(); ctx.stroke();
  } else if (kind === "narrow") {
    h = 0.7 * s;
    ctx.moveTo(x, y - h); ctx.lineTo(x + h, y); ctx.lineTo(x, y + h); ctx.lineTo(x - h, y); ctx.closePath();
    ctx.fillStyle = ORANGE; ctx.strokeStyle = INK; ctx.lineWidth = 1.2; ctx.fill(); ctx.stroke();
  } else if (kind === "personnel") {
    ctx.arc(x, y - 0.48 * s, 0.2 * s, 0, 2 * Math.PI); ctx.fillStyle = INK; ctx.fill();
    ctx.beginPath(); ctx.moveTo(x, y - 0.22 * s); ctx.lineTo(x + 0.38 * s, y + 0.55 * s); ctx.lineTo(x - 0.38 * s, y + 0.55 * s); ctx.closePath();
    ctx.strokeStyle = "#ffffff"; ctx.lineWidth = 1; ctx.fill(); ctx.stroke();
  } else if (kind === "leak") {
    ctx.arc(x, y, 0.6 * s, 0, 2 * Math.PI); ctx.setLineDash([4, 2]); ctx.strokeStyle = VERMILLION; ctx.lineWidth = 3; ctx.stroke(); ctx.setLineDash([]);
  } else if (kind === "opening") {
    ctx.arc(x, y, 0.3 * s, 0, 2 * Math.PI); ctx.fillStyle = ORANGE; ctx.strokeStyle = INK; ctx.lineWidth = 1; ctx.fill(); ctx.stroke();
  } else if (kind === "closed") {
    h = 0.35 * s; ctx.moveTo(x - h, y - h); ctx.lineTo(x + h, y + h); ctx.moveTo(x - h, y + h); ctx.lineTo(x + h, y - h);
    ctx.strokeStyle = VERMILLION; ctx.lineWidth = 3; ctx.stroke();
  }
}
function label(text, x, y, colour) {
  ctx.font = "13px 'DejaVu Sans', Verdana, Arial, sans-serif";
  ctx.lineWidth = 4; ctx.strokeStyle = "rgba(255,255,255,0.9)"; ctx.lineJoin = "round";
  ctx.strokeText(text, x, y); ctx.fillStyle = colour || INK; ctx.fillText(text, x, y);
}
function inView(x, y, margin) { return x >= -margin && y >= -margin && x <= view.width + margin && y <= view.height + margin; }

/* The areas and lanes change only with the layers and the zoom: they are drawn into a
   picture somewhat larger than the window, which panning moves and zooming scales, and
   redrawn when the layers change, the window leaves the picture or the zoom settles. */
var CACHE_MARGIN = 0.25, SETTLE_MS = 150;
var cache = { canvas: document.createElement("canvas"), key: null, scale: 0, cx: 0, cy: 0, w: 0, h: 0, ratio: 0 };
var settleTimer = null;
function cacheKey() { return layers.map(function (layer) { return layer.on ? "1" : "0"; }).join(""); }
function cacheSize() { return [Math.ceil(view.width * (1 + 2 * CACHE_MARGIN)), Math.ceil(view.height * (1 + 2 * CACHE_MARGIN))]; }
function cacheState() {
  var size = cacheSize();
  if (cache.key !== cacheKey() || cache.ratio !== view.ratio || cache.w !== size[0] || cache.h !== size[1]) return "stale";
  var k = view.scale / cache.scale;
  if (k > 2 || k < 0.5) return "stale";
  if (cache.whole) return k === 1 ? "fresh" : "scaled";     // the whole plan is in the picture
  var seen = visible(), halfW = cache.w / 2 / cache.scale, halfH = cache.h / 2 / cache.scale;
  if (seen[0] < cache.cx - halfW || seen[2] > cache.cx + halfW || seen[1] < cache.cy - halfH || seen[3] > cache.cy + halfH) return "stale";
  return k === 1 ? "fresh" : "scaled";
}
function renderCache() {
  var size = cacheSize(), r = view.ratio, width = Math.round(size[0] * r), height = Math.round(size[1] * r);
  // an OffscreenCanvas turned into an ImageBitmap: drawn each frame as a plain copy
  var target = typeof OffscreenCanvas === "function" ? new OffscreenCanvas(width, height) : cache.canvas;
  target.width = width; target.height = height;
  var saved = ctx, savedView = view;
  ctx = target.getContext("2d");
  // when the whole plan fits in the picture, centre it on the plan: panning never redraws
  var whole = (B[2] - B[0]) * savedView.scale + 8 <= size[0] && (B[3] - B[1]) * savedView.scale + 8 <= size[1];
  var cx = whole ? (B[0] + B[2]) / 2 : savedView.cx, cy = whole ? (B[1] + B[3]) / 2 : savedView.cy;
  view = { cx: cx, cy: cy, scale: savedView.scale, width: size[0], height: size[1], ratio: r };
  try { drawStatic(); } finally { ctx = saved; view = savedView; }
  if (cache.image && cache.image.close) cache.image.close();
  cache.image = target === cache.canvas ? cache.canvas : target.transferToImageBitmap();
  cache.key = cacheKey(); cache.scale = view.scale; cache.cx = cx; cache.cy = cy; cache.whole = whole;
  cache.w = size[0]; cache.h = size[1]; cache.ratio = r;
}
function drawStatic() {
  var r = view.ratio, s = view.scale;
  ctx.setTransform(r, 0, 0, r, 0, 0);
  ctx.lineCap = "butt"; ctx.lineJoin = "miter"; ctx.setLineDash([]);   // every picture starts alike
  ctx.fillStyle = "#ffffff"; ctx.fillRect(0, 0, view.width, view.height);
  var box = visible(), seen = { x0: box[0], y0: box[1], x1: box[2], y1: box[3], scale: s };
  // areas and lanes: Path2D in local metres under the view transform
  ctx.setTransform(r * s, 0, 0, -r * s, r * (view.width / 2 - view.cx * s), r * (view.height / 2 + view.cy * s));
  AREA_ORDER.forEach(function (role) {
    if (!areaTiles[role] || !layerOn("area-" + role)) return;
    var style = AREA_STYLES[role];
    ctx.fillStyle = style.fill;
    if (style.stroke) { ctx.strokeStyle = style.stroke; ctx.lineWidth = style.width / s; ctx.setLineDash(style.dash ? style.dash.map(function (d) { return d / s; }) : []); }
    areaTiles[role].each(seen, function (path) { ctx.fill(path, "evenodd"); if (style.stroke) ctx.stroke(path); });
    ctx.setLineDash([]);
  });
  if (data.rooms.length && layerOn("rooms")) {
    ctx.fillStyle = "rgba(204,121,167,0.18)"; ctx.strokeStyle = PURPLE; ctx.lineWidth = 2 / s;
    roomTiles.each(seen, function (path) { ctx.fill(path, "evenodd"); ctx.stroke(path); });
  }
  ctx.lineCap = "round"; ctx.lineJoin = "round";
  if (layerOn("lanes")) {
    ctx.lineWidth = Math.max(2.5 / s, Math.min(0.25, 6 / s));
    laneTiles.forEach(function (tiles, k) { ctx.strokeStyle = laneColours[k]; tiles.each(seen, function (path) { ctx.stroke(path); }); });
  }
  if (changeTiles && layerOn("changes")) {
    ctx.lineWidth = 5 / s;
    ctx.strokeStyle = VERMILLION; ctx.setLineDash([6 / s, 4 / s]); changeTiles.removed.each(seen, function (p) { ctx.stroke(p); });
    ctx.setLineDash([]); ctx.strokeStyle = GREEN; changeTiles.added.each(seen, function (p) { ctx.stroke(p); });
  }
  drawMarks();
}

// symbols and text, in CSS pixels: part of the cached picture
function drawMarks() {
  var r = view.ratio, s = view.scale;
  ctx.setTransform(r, 0, 0, r, 0, 0);
  var size = 14, dense = s < 2;
  // nodes: one path per kind (a few draw calls, however many nodes); level of detail: lane
  // ends and junctions shrink when zoomed out, waypoints and links show only when zoomed in
  NODE_KINDS.forEach(function (kind) {
    if (!layerOn("node-" + kind) || (dense && (kind === "waypoint" || kind === "link"))) return;
    var radius = (kind === "junction" ? 0.36 : 0.28) * (dense ? 9 : size), list = nodesByKind[kind];
    ctx.beginPath();
    for (var k = 0; k < list.length; k++) {
      var p = toScreen(nx_[list[k]] - OX, ny_[list[k]] - OY);
      if (!inView(p[0], p[1], 10)) continue;
      ctx.moveTo(p[0] + radius, p[1]); ctx.arc(p[0], p[1], radius, 0, 2 * Math.PI);
    }
    var solid = kind === "junction" || kind === "station";
    ctx.fillStyle = solid ? INK : "#ffffff"; ctx.strokeStyle = solid ? "#ffffff" : INK; ctx.lineWidth = dense ? 0.8 : 1.2;
    ctx.fill(); ctx.stroke();
  });
  if (data.openings.length && layerOn("openings")) {
    data.openings.forEach(function (o) {
      var p = toScreen(o.xy[0], o.xy[1]);
      if (!inView(p[0], p[1], 40)) return;
      if (o.line) {
        var a = toScreen(o.line[0], o.line[1]), b = toScreen(o.line[2], o.line[3]);
        ctx.beginPath(); ctx.moveTo(a[0], a[1]); ctx.lineTo(b[0], b[1]);
        ctx.lineWidth = 5; ctx.strokeStyle = OPENING_COLOURS[o.kind] || ORANGE;
        ctx.setLineDash(o.passable ? [] : [4, 3]); ctx.stroke(); ctx.setLineDash([]);
      }
      if (!o.line || s < 8) symbol(o.passable ? "opening" : "closed", p[0], p[1], o.passable ? 12 : size);
    });
  }
  if (data.changes && layerOn("changes")) drawNodeChanges();
  if (layerOn("problems")) {
    data.problems.forEach(function (item) {
      if (item.x === null || item.kind === "unreachable") return;
      var p = toScreen(item.x - OX, item.y - OY);
      if (inView(p[0], p[1], 20)) symbol(item.kind, p[0], p[1], 18);
    });
  }
  if (layerOn("stations")) {
    var withLabels = data.stations.length <= 60 || s > 4;
    data.stations.forEach(function (st) {
      var p = toScreen(st[1] - OX, st[2] - OY);
      if (!inView(p[0], p[1], 200)) return;
      symbol(st[4] ? "station" : "unreachable", p[0], p[1], 16);
      if (withLabels) label(st[4] ? st[0] : st[0] + " (unreachable)", p[0] + 12, p[1] - 8, st[4] ? INK : "#A03000");
    });
  }
  if (data.rooms.length && layerOn("rooms") && s > 3) {
    data.rooms.forEach(function (room) {
      if (!room.polygons.length || !room.names.length) return;
      var c = ringCentre(room.polygons[0][0]), p = toScreen(c[0], c[1]);
      if (inView(p[0], p[1], 100)) label(room.names.join(" / "), p[0], p[1], "#6b2a50");
    });
  }
}

function draw() {
  scheduled = false;
  var started = performance.now(), r = view.ratio, s = view.scale;
  var state = cacheState();
  if (state === "stale") renderCache();
  else if (state === "scaled") {
    clearTimeout(settleTimer);
    settleTimer = setTimeout(function () { cache.key = null; request(); }, SETTLE_MS);
  }
  ctx.setTransform(r, 0, 0, r, 0, 0);
  ctx.lineCap = "butt"; ctx.lineJoin = "miter"; ctx.setLineDash([]);
  ctx.fillStyle = "#ffffff"; ctx.fillRect(0, 0, view.width, view.height);
  var k = s / cache.scale, corner = toScreen(cache.cx - cache.w / 2 / cache.scale, cache.cy + cache.h / 2 / cache.scale);
  if (state !== "scaled") corner = [Math.round(corner[0] * r) / r, Math.round(corner[1] * r) / r];
  ctx.drawImage(cache.image, corner[0], corner[1], cache.w * k, cache.h * k);
  ctx.setTransform(r * s, 0, 0, -r * s, r * (view.width / 2 - view.cx * s), r * (view.height / 2 + view.cy * s));
  ctx.lineCap = "round"; ctx.lineJoin = "round";
  if (route) {
    ctx.lineWidth = 9 / s; ctx.strokeStyle = "rgba(0,0,0,0.55)"; strokeEdges(route.edges);
    ctx.lineWidth = 5 / s; ctx.strokeStyle = YELLOW; strokeEdges(route.edges);
  }
  if (hovered && hovered.type === "edge") { ctx.lineWidth = 7 / s; ctx.strokeStyle = SKY; strokeEdges([hovered.index]); }
  ctx.setTransform(r, 0, 0, r, 0, 0);
  routeEnds.forEach(function (n) { var p = toScreen(nx_[n] - OX, ny_[n] - OY); ring(p[0], p[1], 14, INK); });
  if (highlight) { var p = toScreen(highlight.x, highlight.y); ring(p[0], p[1], 22, VERMILLION); ring(p[0], p[1], 26, "#ffffff"); }
  if (hovered && hovered.type === "node") { p = toScreen(nx_[hovered.index] - OX, ny_[hovered.index] - OY); ring(p[0], p[1], 10, SKY); }
  updateScale();
  stats.frames++;
  stats.lastFrameMs = performance.now() - started;
  if (stats.firstPicture === null) { stats.firstPicture = performance.now(); document.body.dataset.ready = "1"; }
}
function ring(x, y, radius, colour) { ctx.beginPath(); ctx.arc(x, y, radius, 0, 2 * Math.PI); ctx.lineWidth = 3; ctx.strokeStyle = colour; ctx.stroke(); }
function ringCentre(flat) { var x = 0, y = 0, n = flat.length / 2; for (var k = 0; k < flat.length; k += 2) { x += flat[k]; y += flat[k + 1]; } return [x / n, y / n]; }
function strokeEdges(list) {
  list.forEach(function (edge) {
    var flat = data.edges[edge][6];
    ctx.beginPath(); ctx.moveTo(flat[0], flat[1]);
    for (var k = 2; k < flat.length; k += 2) ctx.lineTo(flat[k], flat[k + 1]);
    ctx.stroke();
  });
}
function drawNodeChanges() {
  ctx.lineWidth = 2;
  data.changes.nodes_moved.forEach(function (m) {
    var a = toScreen(m[1], m[2]), b = toScreen(m[3], m[4]);
    ctx.beginPath(); ctx.moveTo(a[0], a[1]); ctx.lineTo(b[0], b[1]); ctx.strokeStyle = ORANGE; ctx.stroke();
    ring(b[0], b[1], 5, ORANGE);
  });
  data.changes.nodes_added.forEach(function (m) { var p = toScreen(m[1], m[2]); ring(p[0], p[1], 6, GREEN); });
  data.changes.nodes_removed.forEach(function (m) { var p = toScreen(m[1], m[2]); ring(p[0], p[1], 6, VERMILLION); });
}
function niceLength(limit) {
  var exponent = Math.floor(Math.log10(limit)), steps = [5, 2, 1];
  for (var k = 0; k < steps.length; k++) if (steps[k] * Math.pow(10, exponent) <= limit) return steps[k] * Math.pow(10, exponent);
  return Math.pow(10, exponent);
}
function updateScale() {
  var length = niceLength(140 / view.scale);
  el("scale-bar").style.width = (length * view.scale).toFixed(1) + "px";
  el("scale-text").textContent = (length >= 1 ? String(+length.toPrecision(6)) : length.toPrecision(1)) + " m";
}
var scheduled = false;
function request() { if (!scheduled) { scheduled = true; requestAnimationFrame(draw); } }
function resize() {
  view.ratio = window.devicePixelRatio || 1;
  var first = view.width === 1;
  view.width = Math.max(box.clientWidth, 1); view.height = Math.max(box.clientHeight, 1);
  canvas.width = Math.round(view.width * view.ratio); canvas.height = Math.round(view.height * view.ratio);
  if (first) fit(); else request();
}

/* ---------- what is under the pointer: lanes and nodes in a coarse grid ---------- */
var CELLS = 64, cellW = Math.max(B[2] - B[0], 1e-6) / CELLS, cellH = Math.max(B[3] - B[1], 1e-6) / CELLS;
var edgeCells = new Map(), nodeCells = new Map();
function cellOf(x, y) {
  return [Math.min(Math.max(Math.floor((x - B[0]) / cellW), 0), CELLS - 1), Math.min(Math.max(Math.floor((y - B[1]) / cellH), 0), CELLS - 1)];
}
function file(map, x0, y0, x1, y1, item) {
  var a = cellOf(x0, y0), b = cellOf(x1, y1);
  for (var gx = a[0]; gx <= b[0]; gx++) for (var gy = a[1]; gy <= b[1]; gy++) {
    var key = gx * CELLS + gy, list = map.get(key);
    if (!list) { list = []; map.set(key, list); }
    list.push(item);
  }
}
data.edges.forEach(function (row, index) {
  var flat = row[6];
  for (var k = 0; k + 3 < flat.length; k += 2) {
    file(edgeCells, Math.min(flat[k], flat[k + 2]), Math.min(flat[k + 1], flat[k + 3]), Math.max(flat[k], flat[k + 2]), Math.max(flat[k + 1], flat[k + 3]), [index, k]);
  }
});
for (i = 0; i < nodeCount; i++) file(nodeCells, nx_[i] - OX, ny_[i] - OY, nx_[i] - OX, ny_[i] - OY, i);
function segmentDistance(px, py, ax, ay, bx, by) {
  var dx = bx - ax, dy = by - ay, len = dx * dx + dy * dy, t = len > 0 ? ((px - ax) * dx + (py - ay) * dy) / len : 0;
  t = Math.max(0, Math.min(1, t));
  return Math.hypot(px - ax - t * dx, py - ay - t * dy);
}
function pick(px, py) {
  var here = toLocal(px, py), reach = 8 / view.scale;
  var a = cellOf(here[0] - reach, here[1] - reach), b = cellOf(here[0] + reach, here[1] + reach);
  var best = null, bestDistance = reach;
  for (var gx = a[0]; gx <= b[0]; gx++) for (var gy = a[1]; gy <= b[1]; gy++) {
    (nodeCells.get(gx * CELLS + gy) || []).forEach(function (n) {
      var d = Math.hypot(nx_[n] - OX - here[0], ny_[n] - OY - here[1]);
      if (d <= bestDistance) { bestDistance = d; best = { type: "node", index: n }; }
    });
  }
  if (layerOn("openings")) {
    data.openings.forEach(function (o, index) {
      var d = Math.hypot(o.xy[0] - here[0], o.xy[1] - here[1]);
      if (d <= bestDistance) { bestDistance = d; best = { type: "opening", index: index }; }
    });
  }
  if (best) return best;
  for (gx = a[0]; gx <= b[0]; gx++) for (gy = a[1]; gy <= b[1]; gy++) {
    (edgeCells.get(gx * CELLS + gy) || []).forEach(function (item) {
      var f = data.edges[item[0]][6], k = item[1];
      var d = segmentDistance(here[0], here[1], f[k], f[k + 1], f[k + 2], f[k + 3]);
      if (d < bestDistance) { bestDistance = d; best = { type: "edge", index: item[0] }; }
    });
  }
  return best;
}
function pickStation(px, py) {
  if (!layerOn("stations")) return null;
  var best = null, bestDistance = 12;
  data.stations.forEach(function (st, index) {
    var p = toScreen(st[1] - OX, st[2] - OY), d = Math.hypot(p[0] - px, p[1] - py);
    if (d <= bestDistance) { bestDistance = d; best = index; }
  });
  return best;
}
function showDetails(rows) {
  var list = el("details");
  list.textContent = "";
  rows.forEach(function (row) {
    var dt = document.createElement("dt"), dd = document.createElement("dd");
    dt.textContent = row[0]; dd.textContent = row[1];
    list.appendChild(dt); list.appendChild(dd);
  });
}
function describe(item) {
  if (!item) return;
  if (item.type === "edge") {
    var row = data.edges[item.index];
    showDetails([["Lane", row[0]], ["From", row[1]], ["To", row[2]], ["Length", metres(row[3])],
                 ["Weight", metres(row[4])], ["Narrowest clearance", metres(row[5])]]);
  } else if (item.type === "node") {
    var n = data.nodes[item.index];
    showDetails([["Node", n[0]], ["Kind", n[3]], ["Clearance", metres(n[5])], ["Label", n[4] || "none"],
                 ["Position", "x " + n[1].toFixed(3) + " m, y " + n[2].toFixed(3) + " m"]]);
  } else if (item.type === "opening") {
    var o = data.openings[item.index];
    showDetails([["Opening", o.kind], ["Clear width", metres(o.width)], ["Robot may pass", o.passable ? "yes, if it fits" : "no"],
                 ["In the outer wall", o.exterior ? "yes" : "no"], ["Position", "x " + (o.xy[0] + OX).toFixed(3) + " m, y " + (o.xy[1] + OY).toFixed(3) + " m"]]);
  } else if (item.type === "station") {
    var st = data.stations[item.index];
    showDetails([["Station", st[0]], ["Node", st[3] || "none"], ["Reachable", st[4] ? "yes" : "no"],
                 ["Why not", st[4] ? "" : st[5]], ["Position", "x " + st[1].toFixed(3) + " m, y " + st[2].toFixed(3) + " m"]]);
  }
}

/* ---------- route between two stations ---------- */
var fromSelect = el("route-from"), toSelect = el("route-to");
(function fillSelects() {
  [fromSelect, toSelect].forEach(function (select) {
    var none = document.createElement("option"); none.value = ""; none.textContent = "(choose a station)"; select.appendChild(none);
    data.stations.forEach(function (st, index) {
      var option = document.createElement("option");
      option.value = String(index); option.textContent = st[4] ? st[0] : st[0] + " (unreachable)";
      select.appendChild(option);
    });
  });
})();
function chooseStation(index) {
  if (!fromSelect.value || (fromSelect.value && toSelect.value)) { fromSelect.value = String(index); toSelect.value = ""; }
  else toSelect.value = String(index);
  updateRoute();
}
function updateRoute() {
  var result = el("route-result"), list = el("route-nodes");
  route = null; routeEnds = []; list.textContent = "";
  var a = fromSelect.value === "" ? null : data.stations[+fromSelect.value], b = toSelect.value === "" ? null : data.stations[+toSelect.value];
  [a, b].forEach(function (st) { if (st && st[3] !== null && nodeIndex.has(st[3])) routeEnds.push(nodeIndex.get(st[3])); });
  if (!a || !b) { result.textContent = a ? "From " + a[0] + ": now choose where to." : ""; request(); return; }
  var bad = [a, b].filter(function (st) { return st[3] === null || !nodeIndex.has(st[3]); });
  if (bad.length) { result.textContent = "No route: " + bad.map(function (st) { return st[0] + " is not on the lane graph (" + st[5] + ")"; }).join("; ") + "."; request(); return; }
  route = (turnRules ? turnRoute : shortestRoute)(nodeIndex.get(a[3]), nodeIndex.get(b[3]));
  if (!route) { result.textContent = "No route from " + a[0] + " to " + b[0] + ": they lie on separate parts of the lane graph."; request(); return; }
  result.textContent = a[0] + " \u2192 " + b[0] + ": " + route.length.toFixed(3) + " m, narrowest clearance " +
    (route.clearance === null ? "unknown" : route.clearance.toFixed(3) + " m") + ", " + route.nodes.length + " nodes";
  result.dataset.length = String(route.length);
  list.textContent = route.nodes.map(function (n) { return data.nodes[n][0]; }).join(" ");
  request();
}
fromSelect.addEventListener("change", updateRoute);
toSelect.addEventListener("change", updateRoute);
el("route-clear").addEventListener("click", function () { fromSelect.value = ""; toSelect.value = ""; updateRoute(); });

/* ---------- find a station or room ---------- */
(function fillLabels() {
  var list = el("find-labels"), names = [];
  data.stations.forEach(function (st) { names.push(st[0]); });
  data.rooms.forEach(function (room) { room.names.forEach(function (name) { names.push(name); }); });
  names.forEach(function (name) { var option = document.createElement("option"); option.value = name; list.appendChild(option); });
})();
function zoomFor(metresAcross) { return Math.min(view.width, view.height) / metresAcross; }
function find(text) {
  var query = text.trim().toLowerCase(), result = el("find-result");
  if (!query) { result.textContent = ""; highlight = null; request(); return; }
  var places = [];
  data.stations.forEach(function (st) { places.push({ name: st[0], x: st[1] - OX, y: st[2] - OY, what: "station" }); });
  data.rooms.forEach(function (room) {
    if (!room.polygons.length) return;
    var c = ringCentre(room.polygons[0][0]);
    room.names.forEach(function (name) { places.push({ name: name, x: c[0], y: c[1], what: "room" }); });
  });
  var exact = places.filter(function (p) { return p.name.toLowerCase() === query; });
  var matches = exact.length ? exact : places.filter(function (p) { return p.name.toLowerCase().indexOf(query) >= 0; });
  if (!matches.length) { result.textContent = "Nothing called \u201c" + text + "\u201d."; highlight = null; request(); return; }
  var first = matches[0];
  highlight = { x: first.x, y: first.y };
  centreOn(first.x, first.y, Math.max(view.scale, zoomFor(40)));
  result.textContent = (matches.length > 1 ? matches.length + " matches; showing " : "Showing ") + first.what + " " + first.name + ".";
}
el("find").addEventListener("change", function () { find(this.value); });
el("find").addEventListener("keydown", function (event) { if (event.key === "Enter") find(this.value); });

/* ---------- problems ---------- */
(function fillProblems() {
  var list = el("problems");
  if (!data.problems.length) { var none = document.createElement("li"); none.textContent = "None found."; list.appendChild(none); }
  data.problems.forEach(function (item, index) {
    var li = document.createElement("li"), holder = item.x === null ? document.createElement("div") : document.createElement("button");
    var title = document.createElement("span"), detail = document.createElement("span");
    title.textContent = item.title; detail.textContent = item.detail; detail.className = "detail";
    holder.appendChild(title); holder.appendChild(detail);
    if (item.x !== null) {
      holder.type = "button"; holder.dataset.problem = String(index);
      holder.addEventListener("click", function () {
        highlight = { x: item.x - OX, y: item.y - OY };
        centreOn(highlight.x, highlight.y, Math.max(view.scale, zoomFor(25)));
      });
    }
    li.appendChild(holder); list.appendChild(li);
  });
})();

/* ---------- key and heading ---------- */
(function fillKey() {
  var key = el("key");
  function row(makeMark, text) {
    var div = document.createElement("div"), mark = makeMark();
    div.className = "key-row"; div.appendChild(mark); div.appendChild(document.createTextNode(text)); key.appendChild(div);
  }
  laneColours.forEach(function (colour, k) {
    var text = k + 1 < laneBins.length ? laneBins[k].toFixed(2) + "\u2013" + laneBins[k + 1].toFixed(2) + " m" : "\u2265 " + laneBins[k].toFixed(2) + " m";
    row(function () { var s = document.createElement("span"); s.className = "key-line"; s.style.background = colour; return s; }, "lane clearance " + text);
  });
  var names = { station: "station", unreachable: "unreachable station", pinch: "pinch point", narrow: "narrow passage",
                personnel: "personnel clearance short", leak: "leak to outside", junction: "junction", end: "lane end" };
  Object.keys(names).forEach(function (kind) {
    row(function () {
      var c = document.createElement("canvas"), r = window.devicePixelRatio || 1;
      c.width = 22 * r; c.height = 22 * r; c.style.width = "22px"; c.style.height = "22px";
      var saved = ctx; ctx = c.getContext("2d"); ctx.scale(r, r); symbol(kind, 11, 11, 14); ctx = saved;
      return c;
    }, names[kind]);
  });
  if (data.openings.length) {
    Object.keys(OPENING_COLOURS).forEach(function (kind) {
      row(function () { var s = document.createElement("span"); s.className = "key-line"; s.style.background = OPENING_COLOURS[kind]; return s; },
          kind === "open" ? "open gap" : kind === "closed" ? "closed opening" : kind);
    });
  }
  row(function () { var s = document.createElement("span"); s.className = "key-line"; s.style.background = YELLOW; s.style.outline = "2px solid #555"; return s; }, "route");
})();
el("facts").textContent = [data.date, "Robot: " + data.robot, data.tool].join("  \u00b7  ");

/* ---------- pan, zoom, pick: mouse, touch, keyboard ---------- */
var pointers = new Map(), dragged = false, pinch = null;
canvas.addEventListener("wheel", function (event) {
  event.preventDefault();
  var rect = canvas.getBoundingClientRect();
  zoomAt(Math.exp(-event.deltaY * (event.deltaMode === 1 ? 0.05 : 0.0015)), event.clientX - rect.left, event.clientY - rect.top);
}, { passive: false });
canvas.addEventListener("pointerdown", function (event) {
  try { canvas.setPointerCapture(event.pointerId); } catch (error) { /* pointer already gone */ }
  pointers.set(event.pointerId, [event.clientX, event.clientY]);
  dragged = false;
  if (pointers.size === 2) pinch = pinchState();
});
function pinchState() {
  var p = Array.from(pointers.values()), rect = canvas.getBoundingClientRect();
  return { distance: Math.hypot(p[0][0] - p[1][0], p[0][1] - p[1][1]), x: (p[0][0] + p[1][0]) / 2 - rect.left, y: (p[0][1] + p[1][1]) / 2 - rect.top };
}
canvas.addEventListener("pointermove", function (event) {
  var last = pointers.get(event.pointerId), rect = canvas.getBoundingClientRect();
  if (!last) {
    var item = pick(event.clientX - rect.left, event.clientY - rect.top);
    if ((item && hovered && item.type === hovered.type && item.index === hovered.index) || item === hovered) return;
    hovered = item; describe(item); request();
    return;
  }
  if (pointers.size === 2) {
    pointers.set(event.pointerId, [event.clientX, event.clientY]);
    var now = pinchState();
    if (pinch && pinch.distance > 0) {
      view.cx -= (now.x - pinch.x) / view.scale; view.cy += (now.y - pinch.y) / view.scale;
      zoomAt(now.distance / pinch.distance, now.x, now.y);
    }
    pinch = now; dragged = true;
    return;
  }
  var dx = event.clientX - last[0], dy = event.clientY - last[1];
  if (Math.abs(dx) + Math.abs(dy) > 0) {
    if (dragged || Math.abs(dx) + Math.abs(dy) > 3) {
      dragged = true;
      view.cx -= dx / view.scale; view.cy += dy / view.scale;
      pointers.set(event.pointerId, [event.clientX, event.clientY]);
      request();
    }
  }
});
function release(event) {
  var wasDrag = dragged || pointers.size > 1;
  pointers.delete(event.pointerId);
  if (pointers.size < 2) pinch = null;
  if (event.type !== "pointerup" || wasDrag) return;
  var rect = canvas.getBoundingClientRect(), px = event.clientX - rect.left, py = event.clientY - rect.top;
  var station = pickStation(px, py);
  if (station !== null) { chooseStation(station); describe({ type: "station", index: station }); return; }
  hovered = pick(px, py); describe(hovered); request();
}
canvas.addEventListener("pointerup", release);
canvas.addEventListener("pointercancel", release);
document.addEventListener("keydown", function (event) {
  var tag = event.target && event.target.tagName;
  if (tag === "INPUT" || tag === "SELECT" || tag === "TEXTAREA" || event.ctrlKey || event.metaKey || event.altKey) return;
  var step = 0.15 * Math.min(view.width, view.height) / view.scale, handled = true;
  if (event.key === "ArrowLeft") view.cx -= step;
  else if (event.key === "ArrowRight") view.cx += step;
  else if (event.key === "ArrowUp") view.cy += step;
  else if (event.key === "ArrowDown") view.cy -= step;
  else if (event.key === "+" || event.key === "=") zoomAt(1.4, view.width / 2, view.height / 2);
  else if (event.key === "-" || event.key === "_") zoomAt(1 / 1.4, view.width / 2, view.height / 2);
  else if (event.key === "0" || event.key === "f") fit();
  else handled = false;
  if (handled) { event.preventDefault(); request(); }
});
el("fit").addEventListener("click", fit);
el("zoom-in").addEventListener("click", function () { zoomAt(1.4, view.width / 2, view.height / 2); });
el("zoom-out").addEventListener("click", function () { zoomAt(1 / 1.4, view.width / 2, view.height / 2); });

/* ---------- for scripted checks and measurements (tests, benchmarks) ---------- */
window.clearwayViewer = {
  stats: stats,
  view: function () { return { x: view.cx + OX, y: view.cy + OY, scale: view.scale, width: view.width, height: view.height }; },
  toScreen: function (x, y) { var p = toScreen(x - OX, y - OY), rect = canvas.getBoundingClientRect(); return [p[0] + rect.left, p[1] + rect.top]; },
  setView: function (x, y, scale) { centreOn(x - OX, y - OY, scale); },
  drawNow: function () { draw(); return stats.lastFrameMs; }
};

new ResizeObserver(resize).observe(box);
resize();
})();
