/*
 * Slice geometry for the browser viewer (plain JS, no build step). Mirrors
 * src/partition/polygon.ts, src/partition/slice.ts and the feasible-slice part of
 * src/check/gaps.ts; the viewer test in test/viz checks that both give the same answers.
 * Needs `tesseraLp` (the engine's LP kernel, inlined by `tessera view`) for the feasible set.
 */
(function (global) {
  'use strict';

  function signedArea(p) {
    if (p.length < 3) return 0;
    var ox = p[0][0], oy = p[0][1], s = 0;
    for (var i = 1; i + 1 < p.length; i++) s += (p[i][0] - ox) * (p[i + 1][1] - oy) - (p[i + 1][0] - ox) * (p[i][1] - oy);
    return s / 2;
  }
  function area(p) { return Math.abs(signedArea(p)); }
  function perimeter(p) {
    var s = 0;
    for (var i = 0; i < p.length; i++) { var q = p[(i + 1) % p.length]; s += Math.hypot(q[0] - p[i][0], q[1] - p[i][1]); }
    return s;
  }
  function thickness(p) { var per = perimeter(p); return per > 0 ? (2 * area(p)) / per : 0; }
  function ccw(p) { return signedArea(p) < 0 ? p.slice().reverse() : p; }

  function clip(p, h) {
    var n = p.length, out = [];
    if (!n) return p;
    var prev = p[n - 1], sPrev = h.a[0] * prev[0] + h.a[1] * prev[1] - h.c;
    for (var i = 0; i < n; i++) {
      var cur = p[i], sCur = h.a[0] * cur[0] + h.a[1] * cur[1] - h.c;
      if (sCur <= 0) {
        if (sPrev > 0) out.push(cut(prev, cur, sPrev, sCur));
        out.push(cur);
      } else if (sPrev <= 0) out.push(cut(prev, cur, sPrev, sCur));
      prev = cur; sPrev = sCur;
    }
    var d = [];
    out.forEach(function (q) { var l = d[d.length - 1]; if (!l || l[0] !== q[0] || l[1] !== q[1]) d.push(q); });
    while (d.length > 1 && d[0][0] === d[d.length - 1][0] && d[0][1] === d[d.length - 1][1]) d.pop();
    return d;
  }
  function cut(p, q, sp, sq) { var t = sp / (sp - sq); return [p[0] + t * (q[0] - p[0]), p[1] + t * (q[1] - p[1])]; }
  function clipAll(p, hs) {
    for (var i = 0; i < hs.length; i++) { p = clip(p, hs[i]); if (p.length < 3) return []; }
    return p;
  }
  function edgeHalfPlanes(p) {
    var hs = [];
    for (var i = 0; i < p.length; i++) {
      var u = p[i], v = p[(i + 1) % p.length], dx = v[0] - u[0], dy = v[1] - u[1], len = Math.hypot(dx, dy);
      if (!len) continue;
      var a = [dy / len, -dx / len];
      hs.push({ a: a, c: a[0] * u[0] + a[1] * u[1] });
    }
    return hs;
  }
  function subtract(pieces, cutHs, minT) {
    var out = [];
    pieces.forEach(function (piece) {
      var rest = piece;
      for (var k = 0; k < cutHs.length; k++) {
        var h = cutHs[k];
        var outside = clip(rest, { a: [-h.a[0], -h.a[1]], c: -h.c });
        if (outside.length >= 3 && thickness(outside) > minT) out.push(outside);
        rest = clip(rest, h);
        if (rest.length < 3) break;
      }
    });
    return out;
  }
  function bbox(p) {
    var b = { x0: Infinity, x1: -Infinity, y0: Infinity, y1: -Infinity };
    p.forEach(function (q) { b.x0 = Math.min(b.x0, q[0]); b.x1 = Math.max(b.x1, q[0]); b.y0 = Math.min(b.y0, q[1]); b.y1 = Math.max(b.y1, q[1]); });
    return b;
  }
  function overlap(a, b, e) { return a.x0 <= b.x1 + e && b.x0 <= a.x1 + e && a.y0 <= b.y1 + e && b.y0 <= a.y1 + e; }
  function complement(domain, polys, minT) {
    var pieces = [domain];
    polys.forEach(function (p) {
      if (p.length < 3 || !pieces.length) return;
      var bb = bbox(p), hs = edgeHalfPlanes(ccw(p)), keep = [], touch = [];
      pieces.forEach(function (q) { (overlap(bb, bbox(q), 0) ? touch : keep).push(q); });
      pieces = keep.concat(subtract(touch, hs, minT));
    });
    return pieces;
  }
  function sharedLength(p, q, eps) {
    var total = 0;
    for (var i = 0; i < p.length; i++) {
      var u = p[i], v = p[(i + 1) % p.length], dx = v[0] - u[0], dy = v[1] - u[1], len = Math.hypot(dx, dy);
      if (len <= eps) continue;
      var tx = dx / len, ty = dy / len;
      for (var j = 0; j < q.length; j++) {
        var s = q[j], t = q[(j + 1) % q.length];
        if (Math.abs((s[0] - u[0]) * ty - (s[1] - u[1]) * tx) > eps || Math.abs((t[0] - u[0]) * ty - (t[1] - u[1]) * tx) > eps) continue;
        var ps = (s[0] - u[0]) * tx + (s[1] - u[1]) * ty, pt = (t[0] - u[0]) * tx + (t[1] - u[1]) * ty;
        var lo = Math.max(0, Math.min(ps, pt)), hi = Math.min(len, Math.max(ps, pt));
        if (hi - lo > eps) total += hi - lo;
      }
    }
    return total;
  }
  function components(polys, eps) {
    var parent = polys.map(function (_, i) { return i; });
    function find(i) { while (parent[i] !== i) { parent[i] = parent[parent[i]]; i = parent[i]; } return i; }
    var boxes = polys.map(bbox);
    for (var i = 0; i < polys.length; i++)
      for (var j = i + 1; j < polys.length; j++)
        if (overlap(boxes[i], boxes[j], eps) && sharedLength(polys[i], polys[j], eps) > eps) {
          var a = find(i), b = find(j);
          if (a !== b) parent[a] = b;
        }
    var groups = new Map();
    polys.forEach(function (_, i) { var r = find(i); if (!groups.has(r)) groups.set(r, []); groups.get(r).push(i); });
    return Array.from(groups.values());
  }
  function adjacency(polys, eps) {
    var nb = polys.map(function () { return []; }), boxes = polys.map(bbox);
    for (var i = 0; i < polys.length; i++)
      for (var j = i + 1; j < polys.length; j++)
        if (overlap(boxes[i], boxes[j], eps) && sharedLength(polys[i], polys[j], eps) > eps) { nb[i].push(j); nb[j].push(i); }
    return nb;
  }

  /** Slice half-planes of {Aθ ≤ b} with the other entries fixed; null when the plane misses it. */
  function sliceHalfPlanes(A, b, spec, tol) {
    var i = spec.axes[0], j = spec.axes[1], hs = [];
    for (var r = 0; r < b.length; r++) {
      var row = A[r], c = b[r];
      for (var k = 0; k < row.length; k++) if (k !== i && k !== j) c -= row[k] * spec.fixed[k];
      var n = Math.hypot(row[i], row[j]);
      if (n <= tol.rank) { if (c < -tol.inside) return null; continue; }
      hs.push({ a: [row[i] / n, row[j] / n], c: c / n });
    }
    return hs;
  }
  function rect(spec) {
    var r = spec.rect;
    return [[r.x0, r.y0], [r.x1, r.y0], [r.x1, r.y1], [r.x0, r.y1]];
  }
  function sliceRegions(regions, spec, tol) {
    var out = [];
    regions.forEach(function (reg, index) {
      var hs = sliceHalfPlanes(reg.A, reg.b, spec, tol);
      if (!hs) return;
      var p = clipAll(rect(spec), hs);
      if (p.length >= 3 && thickness(p) > tol.radius) out.push({ index: index, id: reg.id, polygon: p, area: area(p) });
    });
    return out;
  }

  function simplify(p, eps) {
    var q = p.slice(), changed = true;
    while (changed && q.length >= 3) {
      changed = false;
      for (var i = 0; i < q.length && q.length >= 3; i++) {
        var a = q[(i + q.length - 1) % q.length], v = q[i], b = q[(i + 1) % q.length];
        var len = Math.hypot(b[0] - a[0], b[1] - a[1]);
        var near = Math.hypot(v[0] - a[0], v[1] - a[1]) <= eps;
        var dist = len > 0 ? Math.abs((b[0] - a[0]) * (v[1] - a[1]) - (b[1] - a[1]) * (v[0] - a[0])) / len : 0;
        if (near || dist <= eps) { q.splice(i, 1); changed = true; i--; }
      }
    }
    return q;
  }
  function hull(points) {
    var pts = points.slice().sort(function (a, b) { return a[0] - b[0] || a[1] - b[1]; });
    if (pts.length < 3) return pts;
    function cross(o, a, b) { return (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0]); }
    var lower = [], upper = [];
    pts.forEach(function (p) { while (lower.length >= 2 && cross(lower[lower.length - 2], lower[lower.length - 1], p) <= 0) lower.pop(); lower.push(p); });
    pts.slice().reverse().forEach(function (p) { while (upper.length >= 2 && cross(upper[upper.length - 2], upper[upper.length - 1], p) <= 0) upper.pop(); upper.push(p); });
    return lower.slice(0, -1).concat(upper.slice(0, -1));
  }

  /** Feasible set of the slice by support LPs (same method as feasibleSlice in src/check/gaps.ts). */
  function feasibleSlice(mp, spec, tol) {
    var lp = global.tesseraLp;
    var nc = mp.nc, nz = mp.nz, nt = mp.ntheta, i = spec.axes[0], j = spec.axes[1];
    var n = nz + 2, m = nc + 4;
    var A = new Float64Array(m * n), b = new Float64Array(m);
    for (var r = 0; r < nc; r++) {
      for (var k = 0; k < nz; k++) A[r * n + k] = mp.G[r * nz + k];
      A[r * n + nz] = -mp.E[r * nt + i];
      A[r * n + nz + 1] = -mp.E[r * nt + j];
      var s = mp.w[r];
      for (var q = 0; q < nt; q++) if (q !== i && q !== j) s += mp.E[r * nt + q] * spec.fixed[q];
      b[r] = s;
    }
    var R = spec.rect;
    [[1, 0, R.x1], [-1, 0, -R.x0], [0, 1, R.y1], [0, -1, -R.y0]].forEach(function (row, q) {
      A[(nc + q) * n + nz] = row[0]; A[(nc + q) * n + nz + 1] = row[1]; b[nc + q] = row[2];
    });
    var start = lp.findFeasiblePoint(A, b, m, n);
    if (!start) return [];
    var c = new Float64Array(n);
    function support(d0, d1) {
      c[nz] = d0; c[nz + 1] = d1;
      var res = lp.lpMaximize(c, A, b, m, n, start);
      if (res.status !== 'optimal') throw new Error('support LP ended ' + res.status);
      return { p: [res.x[nz], res.x[nz + 1]], value: res.value };
    }
    var pts = [];
    for (var t = 0; t < 8; t++) pts.push(support(Math.cos((t * Math.PI) / 4), Math.sin((t * Math.PI) / 4)).p);
    var scale = Math.max(R.x1 - R.x0, R.y1 - R.y0, 1), eps = tol.primal * 100 * scale;
    var h = simplify(ccw(hull(pts)), eps);
    if (h.length < 3) return [];
    var lps = 0, maxLps = 4 * m + 40;
    for (var e = 0; e < h.length && lps < maxLps;) {
      var u = h[e], v = h[(e + 1) % h.length], dx = v[0] - u[0], dy = v[1] - u[1], len = Math.hypot(dx, dy);
      if (len <= eps) { e++; continue; }
      var nx = dy / len, ny = -dx / len, sp = support(nx, ny);
      lps++;
      if (sp.value > nx * u[0] + ny * u[1] + eps) h = h.slice(0, e + 1).concat([sp.p], h.slice(e + 1));
      else e++;
    }
    h = simplify(h, eps);
    return h.length >= 3 && area(h) > 0 ? h : [];
  }

  /** Uncovered parts split into holes (feasible) and infeasible parts, as in sliceGaps. */
  function sliceGaps(spec, polys, feasible, tol) {
    var unc = complement(rect(spec), polys.map(function (p) { return p.polygon; }), tol.radius);
    var holes = [], infeasible = [];
    if (feasible === null) { /* unclassified */ }
    else if (feasible.length < 3) infeasible = unc;
    else {
      var hs = edgeHalfPlanes(feasible);
      unc.forEach(function (piece) {
        var inside = clipAll(piece, hs);
        if (inside.length >= 3 && thickness(inside) > tol.radius) holes.push(inside);
      });
      infeasible = subtract(unc, hs, tol.radius);
    }
    var R = spec.rect, scale = Math.max(R.x1 - R.x0, R.y1 - R.y0);
    function sum(ps) { return ps.reduce(function (a, p) { return a + area(p); }, 0); }
    return {
      uncovered: unc, holes: holes, infeasible: infeasible,
      holeGroups: components(holes, tol.inside * Math.max(1, scale)),
      areas: { rect: area(rect(spec)), covered: polys.reduce(function (a, p) { return a + p.area; }, 0), holes: sum(holes), infeasible: sum(infeasible) },
    };
  }

  function contains(reg, th, slack) {
    for (var i = 0; i < reg.A.length; i++) {
      var s = 0;
      for (var j = 0; j < th.length; j++) s += reg.A[i][j] * th[j];
      if (s > reg.b[i] + slack) return false;
    }
    return true;
  }
  function locate(regions, th, slack) {
    for (var i = 0; i < regions.length; i++) if (contains(regions[i], th, slack)) return i;
    return -1;
  }
  function affine(map, th) {
    return map.F.map(function (row, i) { return row.reduce(function (s, v, j) { return s + v * th[j]; }, map.g[i]); });
  }

  function convexContains(p, pt, eps) {
    var hs = edgeHalfPlanes(ccw(p));
    for (var i = 0; i < hs.length; i++) if (hs[i].a[0] * pt[0] + hs[i].a[1] * pt[1] > hs[i].c + eps) return false;
    return true;
  }

  global.tesseraGeometry = {
    convexContains: convexContains,
    area: area, ccw: ccw, thickness: thickness, sliceRegions: sliceRegions, sliceGaps: sliceGaps,
    feasibleSlice: feasibleSlice, adjacency: adjacency, locate: locate, affine: affine, rect: rect,
  };
})(typeof window !== 'undefined' ? window : globalThis);
