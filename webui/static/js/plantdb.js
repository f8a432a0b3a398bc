/* plantdb's maps: the plant by viewport, search, lines of cables and circuits, dispatch overlays.
 *
 * Every page passes its settings in data-* attributes (no inline script): a map element with
 * data-map="plant" draws the plant's layers, loading only what lies in view from
 * /api/v1/map?bbox=...; data-map="lines" draws the GeoJSON named by data-geometry-url.
 * Labels reach the page only through textContent, never as HTML.
 */
(function () {
  "use strict";

  // Symbols of this project: line kinds told apart by dash pattern as well as colour.
  var SPAN_STYLES = {
    underground: { color: "#3d4a5c", weight: 4, dashArray: null, title: "Spans: underground duct" },
    aerial: { color: "#1b7f79", weight: 3, dashArray: "9 6", title: "Spans: aerial" },
    buried: { color: "#8d6e2f", weight: 4, dashArray: "2 7", title: "Spans: direct buried" },
    inside: { color: "#7a7a7a", weight: 2, dashArray: "3 3", title: "Spans: inside buildings" }
  };
  var POINT_STYLE = { radius: 5, color: "#222", weight: 2, dashArray: null, fillColor: "#fff", fillOpacity: 1 };
  var BUILDINGS = ["central_office", "hut", "data_center", "building_entrance", "cabinet"];

  function words(text) {
    return String(text || "").replace(/_/g, " ");
  }

  function element(tag, className, text) {
    var node = document.createElement(tag);
    if (className) { node.className = className; }
    if (text !== undefined && text !== null) { node.textContent = String(text); }
    return node;
  }

  function link(href, text) {
    var a = element("a", null, text);
    a.href = href;
    return a;
  }

  function readJson(node, name) {
    var raw = node.getAttribute(name);
    return raw ? JSON.parse(raw) : null;
  }

  function spanStyle(kind) {
    var style = SPAN_STYLES[kind] || SPAN_STYLES.underground;
    return { color: style.color, weight: style.weight, dashArray: style.dashArray, lineCap: "round" };
  }

  /* Name a drawn thing on its DOM element (for people using assistive technology and for
   * tests), again whenever its layer is switched back on. */
  function tagElement(layer, kind, label) {
    function apply() {
      var node = layer.getElement && layer.getElement();
      if (node) {
        node.setAttribute("data-layer", kind);
        node.setAttribute("data-label", label);
        node.setAttribute("aria-label", words(kind) + " " + label);
      }
    }
    layer.on("add", apply);
    apply();
  }

  function popupFor(title, detail, links) {
    var box = element("div", "popup");
    box.appendChild(element("strong", null, title));
    if (detail) { box.appendChild(element("div", "popup-detail", detail)); }
    var list = element("ul", "popup-links");
    links.forEach(function (item) {
      var li = element("li");
      li.appendChild(link(item[0], item[1]));
      list.appendChild(li);
    });
    box.appendChild(list);
    return box;
  }

  function baseMap(node, settings) {
    var map = L.map(node, { zoomControl: true, preferCanvas: false, keyboard: true });
    if (settings.tile_url) {
      L.tileLayer(settings.tile_url, { maxZoom: 20, attribution: settings.tile_attribution || "" }).addTo(map);
    }
    L.control.scale({ imperial: false }).addTo(map);
    if (settings.extent) {
      var e = settings.extent;
      map.fitBounds([[e[1], e[0]], [e[3], e[2]]], { padding: [20, 20] });
    } else {
      map.setView([0, 0], 2);
    }
    return map;
  }

  /* The plant's layers, reloaded for the viewport after every move. */
  function PlantLayers(map, settings) {
    this.map = map;
    this.settings = settings;
    this.request = null;
    this.byLabel = {};
    this.shown = {};
    this.groups = {
      structure: L.layerGroup(),
      closure: L.layerGroup(),
      panel: L.layerGroup()
    };
    this.spanGroups = {};
    var overlays = {};
    var self = this;
    Object.keys(SPAN_STYLES).forEach(function (kind) {
      self.spanGroups[kind] = L.layerGroup().addTo(map);
      overlays[SPAN_STYLES[kind].title] = self.spanGroups[kind];
    });
    overlays.Structures = this.groups.structure.addTo(map);
    overlays.Closures = this.groups.closure.addTo(map);
    overlays.Panels = this.groups.panel.addTo(map);
    // Open on a wide screen; on a tablet the legend beside the map says what the symbols are.
    L.control.layers(null, overlays, { collapsed: window.innerWidth < 1280 }).addTo(map);
    this.notice = L.control({ position: "bottomleft" });
    this.notice.onAdd = function () { return element("div", "map-notice"); };
    this.notice.addTo(map);
    map.on("moveend", function () { self.schedule(); });
  }

  PlantLayers.prototype.schedule = function () {
    var self = this;
    window.clearTimeout(this.timer);
    this.timer = window.setTimeout(function () { self.load(); }, 120);
  };

  PlantLayers.prototype.load = function () {
    var bounds = this.map.getBounds().pad(0.2);
    var box = [
      Math.max(bounds.getWest(), -180), Math.max(bounds.getSouth(), -90),
      Math.min(bounds.getEast(), 180), Math.min(bounds.getNorth(), 90)
    ].map(function (v) { return v.toFixed(6); }).join(",");
    if (this.request) { this.request.abort(); }
    this.request = new AbortController();
    var self = this;
    return fetch(this.settings.map_url + "?bbox=" + box, { signal: this.request.signal })
      .then(function (answer) { return answer.json(); })
      .then(function (collection) { self.draw(collection); })
      .catch(function (error) { if (error.name !== "AbortError") { self.say("Could not load the map: " + error); } });
  };

  PlantLayers.prototype.say = function (text) {
    var node = this.notice.getContainer();
    node.textContent = text || "";
    node.hidden = !text;
  };

  /* Keep what is still in view (an open popup stays open), add what is new, drop the rest. */
  PlantLayers.prototype.draw = function (collection) {
    var next = {};
    var placed = { closure: {}, panel: {} };
    var self = this;
    collection.features.forEach(function (feature) {
      var p = feature.properties;
      if (placed[p.layer]) {
        var key = feature.geometry.coordinates.join(",");
        (placed[p.layer][key] = placed[p.layer][key] || []).push(feature);
        return;
      }
      next[feature.id] = true;
      if (!self.shown[feature.id]) {
        self.shown[feature.id] = p.layer === "span" ? self.addSpan(feature) : self.addStructure(feature);
      }
    });
    Object.keys(placed).forEach(function (layer) {
      Object.keys(placed[layer]).forEach(function (key) {
        var group = placed[layer][key];
        var id = layer + "@" + key + "@" + group.map(function (f) { return f.properties.label; }).join(",");
        next[id] = true;
        if (!self.shown[id]) { self.shown[id] = self.addPlaced(layer, group); }
      });
    });
    Object.keys(this.shown).forEach(function (id) {
      var layer = self.shown[id];
      if (next[id] || layer.isPopupOpen()) { return; }
      layer.plantGroup.removeLayer(layer);
      delete self.shown[id];
      Object.keys(self.byLabel).forEach(function (label) {
        if (self.byLabel[label] === layer) { delete self.byLabel[label]; }
      });
    });
    var cut = collection.truncated || [];
    this.say(cut.length ? "Zoom in to see every " + cut.join(", ") + " here." : "");
    this.map.fire("plant:loaded");
  };

  PlantLayers.prototype.remember = function (label, layer) {
    this.byLabel[label] = layer;
    return layer;
  };

  PlantLayers.prototype.addSpan = function (feature) {
    var p = feature.properties;
    var line = L.geoJSON(feature, { style: function () { return spanStyle(p.kind); } });
    var detail = words(p.kind) + (p.length_m ? ", " + p.length_m.toLocaleString() + " m" : "");
    line.bindPopup(popupFor("Span " + p.label, detail, [
      [p.url, "Span page"],
      [this.settings.dispatch_url + "?span=" + encodeURIComponent(p.label) + "#impact-answer", "Cut impact of this span"]
    ]));
    line.plantGroup = this.spanGroups[p.kind] || this.spanGroups.underground;
    line.addTo(line.plantGroup);
    line.eachLayer(function (path) { tagElement(path, "span", p.label); });
    return this.remember(p.label, line);
  };

  PlantLayers.prototype.addStructure = function (feature) {
    var p = feature.properties;
    var c = feature.geometry.coordinates;
    var building = BUILDINGS.indexOf(p.kind) >= 0;
    var marker = L.circleMarker([c[1], c[0]], {
      radius: building ? 7 : 5,
      color: "#222",
      weight: 2,
      fillColor: building ? "#44505e" : "#ffffff",
      fillOpacity: 1
    });
    marker.bindTooltip(p.label, { direction: "top", offset: [0, -6] });
    marker.bindPopup(popupFor(p.label, words(p.kind), [
      [p.url, "Structure page"],
      [this.settings.dispatch_url + "?structure=" + encodeURIComponent(p.label) + "#impact-answer", "Cut impact at this structure"]
    ]));
    marker.plantGroup = this.groups.structure;
    marker.addTo(marker.plantGroup);
    tagElement(marker, "structure", p.label);
    return this.remember(p.label, marker);
  };

  PlantLayers.prototype.addPlaced = function (layer, features) {
    var first = features[0];
    var c = first.geometry.coordinates;
    var labels = features.map(function (f) { return f.properties.label; });
    var noun = layer === "closure" ? "Closure" : "Panel";
    // Closures sit up and right of their structure, panels up and left, so neither hides it.
    var icon = L.divIcon({
      className: "symbol symbol-" + layer,
      html: "<span class=\"shape\"></span>",
      iconSize: layer === "closure" ? [14, 14] : [14, 10],
      iconAnchor: layer === "closure" ? [-4, 18] : [18, 16]
    });
    var title = noun + (labels.length > 1 ? "s " : " ") + labels.join(", ");
    var marker = L.marker([c[1], c[0]], { icon: icon, title: title, alt: title, keyboard: true });
    marker.bindPopup(popupFor(title, "at " + first.properties.structure, features.map(function (f) {
      return [f.properties.url, noun + " " + f.properties.label];
    })));
    marker.plantGroup = this.groups[layer];
    marker.addTo(marker.plantGroup);
    tagElement(marker, layer, labels.join(" "));
    var self = this;
    labels.forEach(function (label) { self.remember(label, marker); });
    return marker;
  };

  PlantLayers.prototype.open = function (label) {
    var layer = this.byLabel[label];
    if (layer) { layer.openPopup(); }
    return Boolean(layer);
  };

  /* Search by label, results as a list of buttons that fly the map to the thing. */
  function searchPanel(form, results, map, layers) {
    form.addEventListener("submit", function (event) {
      event.preventDefault();
      var q = form.elements.q.value.trim();
      if (!q) { return; }
      fetch(form.getAttribute("data-api") + "?q=" + encodeURIComponent(q))
        .then(function (answer) { return answer.json(); })
        .then(function (found) { showResults(found.results || [], results, map, layers); });
    });
  }

  function showResults(found, results, map, layers) {
    results.textContent = "";
    if (!found.length) {
      results.appendChild(element("li", "empty", "Nothing found."));
      return;
    }
    found.forEach(function (item) {
      var li = element("li");
      if (item.lon !== undefined && item.lat !== undefined) {
        var go = element("button", "result", item.label);
        go.type = "button";
        go.addEventListener("click", function () { flyTo(map, layers, item); });
        li.appendChild(go);
      } else {
        li.appendChild(link(item.url, item.label));
      }
      li.appendChild(element("span", "result-detail", " " + words(item.kind) + (item.detail ? ", " + item.detail : "")));
      if (item.url) { li.appendChild(document.createTextNode(" ")); li.appendChild(link(item.url, "page")); }
      results.appendChild(li);
    });
  }

  function flyTo(map, layers, item) {
    map.once("plant:loaded", function () { layers.open(item.label); });
    map.setView([item.lat, item.lon], Math.max(map.getZoom(), 17));
    if (layers.open(item.label)) { return; }
  }

  function focusOn(map, layers, label, api) {
    fetch(api + "?q=" + encodeURIComponent(label))
      .then(function (answer) { return answer.json(); })
      .then(function (found) {
        var item = (found.results || []).filter(function (r) { return r.label === label; })[0];
        if (item && item.lon !== undefined) { flyTo(map, layers, item); }
      });
  }

  function drawLines(map, collection, options) {
    options = options || {};
    var layer = L.geoJSON(collection, {
      pane: options.pane || "overlayPane",
      style: function (feature) {
        if (feature.geometry.type === "Point") { return POINT_STYLE; }
        if (options.highlight) { return options.highlight(feature); }
        return spanStyle(feature.properties.kind);
      },
      pointToLayer: function (feature, latlng) {
        var p = feature.properties;
        var marker = L.circleMarker(latlng, L.extend({ pane: options.pane || "overlayPane" }, POINT_STYLE));
        var mark = p.mark_m !== undefined && p.mark_m !== null ? " (mark " + p.mark_m + " m)" : "";
        marker.bindTooltip(p.label + mark, { permanent: Boolean(options.labels), direction: "right", offset: [10, 0] });
        return marker;
      }
    }).addTo(map);
    layer.eachLayer(function (item) {
      if (item.feature && item.feature.properties) { tagElement(item, item.feature.properties.layer, item.feature.properties.label); }
    });
    if (collection.bbox) {
      var b = collection.bbox;
      map.fitBounds([[b[1], b[0]], [b[3], b[2]]], { padding: [30, 30], maxZoom: 18 });
    }
    return layer;
  }

  function linesMap(node) {
    var settings = readJson(node, "data-settings") || {};
    var map = baseMap(node, settings);
    fetch(node.getAttribute("data-geometry-url"))
      .then(function (answer) { return answer.json(); })
      .then(function (collection) {
        var emphasis = node.getAttribute("data-emphasis");
        drawLines(map, collection, {
          labels: true,
          highlight: emphasis ? function () { return { color: emphasis, weight: 6, opacity: 0.85 }; } : null
        });
        node.setAttribute("data-ready", "true");
      });
  }

  /* Highlights lie under the plant's own lines, so the spans keep their symbols on top. */
  function highlightPane(map) {
    if (!map.getPane("highlight")) {
      map.createPane("highlight").style.zIndex = 350;
    }
    return "highlight";
  }

  function impactOverlay(map, impact) {
    if (!impact.cables_url) { return; }
    var pane = highlightPane(map);
    var targets = impact.spans || [];
    fetch(impact.cables_url)
      .then(function (answer) { return answer.json(); })
      .then(function (collection) {
        drawLines(map, collection, {
          pane: pane,
          highlight: function (feature) {
            var hit = targets.indexOf(feature.properties.label) >= 0;
            return hit ? { color: "#c2185b", weight: 10, opacity: 0.9, className: "impact-target" }
              : { color: "#e0a100", weight: 8, opacity: 0.55, className: "impact-cable" };
          }
        });
        map.getContainer().setAttribute("data-impact", "drawn");
      });
  }

  function locateOverlay(map, located) {
    // The answer lies above the plant's lines, which reload under it as the map moves.
    map.createPane("answer").style.zIndex = 450;
    var bounds = [[located.lat, located.lon]];
    if (located.range_line && located.range_line.length > 1) {
      var line = located.range_line.map(function (p) { return [p[1], p[0]]; });
      L.polyline(line, { pane: "answer", color: "#ff6f00", weight: 9, opacity: 0.85, className: "locate-range" })
        .bindTooltip("range of the break").addTo(map);
      bounds = bounds.concat(line);
    }
    (located.places || []).forEach(function (place) {
      L.circleMarker([place.lat, place.lon], { pane: "answer", radius: 7, color: "#111", weight: 3, fillColor: "#fff", fillOpacity: 1 })
        .bindTooltip(place.label, { permanent: true, direction: "right", offset: [12, 0], className: "locate-place" }).addTo(map);
      bounds.push([place.lat, place.lon]);
    });
    var pin = L.marker([located.lat, located.lon], {
      // A teardrop whose point (the square's corner turned downward) marks the spot.
      icon: L.divIcon({ className: "locate-pin", html: "<span class=\"shape\"></span>", iconSize: [24, 24], iconAnchor: [12, 29] }),
      title: "Break: " + located.label,
      alt: "Break: " + located.label,
      keyboard: true
    }).addTo(map);
    pin.bindPopup(popupFor("Break located", located.label, []));
    map.fitBounds(bounds, { padding: [40, 40], maxZoom: 18 });
  }

  function plantMap(node) {
    var settings = readJson(node, "data-settings") || {};
    var map = baseMap(node, settings);
    var layers = new PlantLayers(map, settings);
    layers.load().then(function () { node.setAttribute("data-ready", "true"); });
    var form = document.getElementById("map-search");
    if (form) { searchPanel(form, document.getElementById("map-results"), map, layers); }
    if (settings.focus) { focusOn(map, layers, settings.focus, settings.search_url); }
    if (settings.impact) { impactOverlay(map, settings.impact); }
    if (settings.locate) { locateOverlay(map, settings.locate); }
    return map;
  }

  function start() {
    Array.prototype.forEach.call(document.querySelectorAll("[data-map]"), function (node) {
      if (node.getAttribute("data-map") === "plant") { plantMap(node); } else { linesMap(node); }
    });
    Array.prototype.forEach.call(document.querySelectorAll("[data-print]"), function (button) {
      button.addEventListener("click", function () { window.print(); });
    });
  }

  if (document.readyState === "loading") {
    document.addEventListener("DOMContentLoaded", start);
  } else {
    start();
  }
}());
