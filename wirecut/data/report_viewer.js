// wirecut report: a small offline 3D viewer of the target surface coloured by deviation.
// Canvas 2D, painter's algorithm (faces sorted far to near each frame), Lambert shading.
// Drag to turn, wheel to zoom, double-click to reset. Reads its mesh from the JSON element
// named by the canvas's data-mesh attribute: {"v": [x,y,z,...] mm, "f": [i,j,k,...],
// "c": ["#rrggbb", ...] one colour per face}. Written for wirecut; no outside code.
(function () {
  "use strict";
  function start(canvas) {
    var data = JSON.parse(document.getElementById(canvas.dataset.mesh).textContent);
    var v = data.v, f = data.f, col = data.c;
    var nv = v.length / 3, nf = f.length / 3;
    var lo = [Infinity, Infinity, Infinity], hi = [-Infinity, -Infinity, -Infinity];
    for (var i = 0; i < nv; i++) {
      for (var a = 0; a < 3; a++) {
        lo[a] = Math.min(lo[a], v[3 * i + a]);
        hi[a] = Math.max(hi[a], v[3 * i + a]);
      }
    }
    var mid = [(lo[0] + hi[0]) / 2, (lo[1] + hi[1]) / 2, (lo[2] + hi[2]) / 2];
    var radius = Math.max(1e-9, Math.hypot(hi[0] - lo[0], hi[1] - lo[1], hi[2] - lo[2]) / 2);
    var rgb = col.map(function (h) {
      return [parseInt(h.substr(1, 2), 16), parseInt(h.substr(3, 2), 16), parseInt(h.substr(5, 2), 16)];
    });
    var view = { yaw: -0.6, pitch: 0.9, zoom: 1.0 };
    var home = { yaw: view.yaw, pitch: view.pitch, zoom: view.zoom };
    var px = new Float64Array(nv), py = new Float64Array(nv), pz = new Float64Array(nv);
    var depth = new Float64Array(nf), order = new Uint32Array(nf);
    var ctx = canvas.getContext("2d");

    function draw() {
      var w = canvas.width, h = canvas.height;
      var cy = Math.cos(view.yaw), sy = Math.sin(view.yaw);
      var cp = Math.cos(view.pitch), sp = Math.sin(view.pitch);
      var s = 0.45 * Math.min(w, h) * view.zoom / radius;
      for (var i = 0; i < nv; i++) {
        var x = v[3 * i] - mid[0], y = v[3 * i + 1] - mid[1], z = v[3 * i + 2] - mid[2];
        var x1 = cy * x - sy * y, y1 = sy * x + cy * y; // turn about the up axis
        var y2 = cp * y1 - sp * z, z2 = sp * y1 + cp * z; // tilt toward the viewer
        px[i] = w / 2 + s * x1;
        py[i] = h / 2 - s * z2;
        pz[i] = y2; // larger is farther
      }
      for (var k = 0; k < nf; k++) {
        depth[k] = pz[f[3 * k]] + pz[f[3 * k + 1]] + pz[f[3 * k + 2]];
        order[k] = k;
      }
      order.sort(function (p, q) { return depth[q] - depth[p]; });
      ctx.fillStyle = "#f4f2ee";
      ctx.fillRect(0, 0, w, h);
      for (var n = 0; n < nf; n++) {
        var t = order[n], a = f[3 * t], b = f[3 * t + 1], c = f[3 * t + 2];
        var ux = px[b] - px[a], uy = py[b] - py[a], wx = px[c] - px[a], wy = py[c] - py[a];
        // shade by the facing of the triangle in 3D (normal toward the light at the viewer)
        var e1 = [v[3 * b] - v[3 * a], v[3 * b + 1] - v[3 * a + 1], v[3 * b + 2] - v[3 * a + 2]];
        var e2 = [v[3 * c] - v[3 * a], v[3 * c + 1] - v[3 * a + 1], v[3 * c + 2] - v[3 * a + 2]];
        var nx = e1[1] * e2[2] - e1[2] * e2[1], ny = e1[2] * e2[0] - e1[0] * e2[2];
        var nz = e1[0] * e2[1] - e1[1] * e2[0], nn = Math.hypot(nx, ny, nz) || 1;
        var depthward = cp * (sy * nx + cy * ny) - sp * nz; // normal along the view axis
        var lit = 0.4 + 0.6 * Math.abs(depthward / nn);
        var q = rgb[t];
        ctx.fillStyle = "rgb(" + Math.round(q[0] * lit) + "," + Math.round(q[1] * lit) + "," +
          Math.round(q[2] * lit) + ")";
        ctx.beginPath();
        ctx.moveTo(px[a], py[a]);
        ctx.lineTo(px[b], py[b]);
        ctx.lineTo(px[c], py[c]);
        ctx.closePath();
        ctx.fill();
        if (Math.abs(ux * wy - uy * wx) > 4) { ctx.strokeStyle = ctx.fillStyle; ctx.stroke(); }
      }
      canvas.dataset.yaw = view.yaw.toFixed(4);
      canvas.dataset.pitch = view.pitch.toFixed(4);
      canvas.dataset.drawn = String(Number(canvas.dataset.drawn || 0) + 1);
    }

    var dragging = null, pending = false;
    function redraw() {
      if (pending) { return; }
      pending = true;
      window.requestAnimationFrame(function () { pending = false; draw(); });
    }
    canvas.addEventListener("mousedown", function (e) { dragging = [e.clientX, e.clientY]; });
    window.addEventListener("mouseup", function () { dragging = null; });
    window.addEventListener("mousemove", function (e) {
      if (!dragging) { return; }
      view.yaw += (e.clientX - dragging[0]) * 0.01;
      view.pitch = Math.max(-1.5, Math.min(1.5, view.pitch + (e.clientY - dragging[1]) * 0.01));
      dragging = [e.clientX, e.clientY];
      redraw();
    });
    canvas.addEventListener("wheel", function (e) {
      e.preventDefault();
      view.zoom = Math.max(0.3, Math.min(8, view.zoom * Math.exp(-e.deltaY * 0.001)));
      redraw();
    }, { passive: false });
    canvas.addEventListener("dblclick", function () {
      view.yaw = home.yaw; view.pitch = home.pitch; view.zoom = home.zoom;
      redraw();
    });
    draw();
  }
  var canvases = document.querySelectorAll("canvas[data-mesh]");
  for (var i = 0; i < canvases.length; i++) { start(canvases[i]); }
})();
