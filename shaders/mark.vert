// SPDX-License-Identifier: GPL-3.0-or-later
#version 330 core
// Floor markings (grid, target line, aim chevron, stance marks, ball ring, contact shadow) as
// thin quads widened on screen. Each vertex knows its own end of the segment and the other
// end; the quad is pushed sideways in pixels, so a line keeps at least a_width.y pixels of
// half-width at any distance and its edge is anti-aliased by one pixel of falloff, all with
// a fragment shader of a few instructions (llvmpipe pays per pixel, not per vertex).
// Fills (a_side == 0) are drawn as they are.
layout(location = 0) in vec3 a_pos;
layout(location = 1) in vec3 a_other;
layout(location = 2) in vec4 a_rgba;
layout(location = 3) in vec4 a_line;    // side (0 fill), half-width m, min half-width px, fade 0/1
// side: -1/+1 at the segment's start, -2/+2 at its end (a_other is then the start), so that
// both ends take the same direction and the quad does not twist.
uniform mat4 u_view_proj;
uniform vec2 u_viewport;                // pixels
uniform float u_px_per_m;               // pixels per metre at 1 m from the eye
uniform vec3 u_eye;
out vec4 v_rgba;
out vec2 v_edge;                        // distance from the centre line in px, half-width px

void main()
{
  vec4 a = u_view_proj * vec4(a_pos, 1.0);
  vec4 b = u_view_proj * vec4(a_other, 1.0);
  float fade = mix(1.0, exp(-0.06 * length(a_pos - u_eye)), a_line.w);
  v_rgba = vec4(a_rgba.rgb, a_rgba.a * fade);
  if (a_line.x == 0.0) {
    v_edge = vec2(0.0, 1.0e4);
    gl_Position = a;
    return;
  }
  // Keep both ends in front of the near plane (z + w >= 0) so the sideways push is taken on
  // the visible part of the segment.
  float da = a.z + a.w, db = b.z + b.w;
  if (da < 0.0 && db < 0.0) {
    gl_Position = vec4(2.0, 2.0, 2.0, 1.0);   // wholly behind the eye: outside the clip volume
    v_edge = vec2(0.0);
    return;
  }
  if (da < 0.0) a = mix(a, b, da / (da - db) + 1e-4);
  if (db < 0.0) b = mix(b, a, db / (db - da) + 1e-4);
  vec2 sa = a.xy / a.w * 0.5 * u_viewport;
  vec2 sb = b.xy / b.w * 0.5 * u_viewport;
  vec2 d = sb - sa;
  float len = length(d);
  vec2 dir = len > 1e-6 ? d / len : vec2(1.0, 0.0);
  float side = sign(a_line.x);
  if (abs(a_line.x) > 1.5) dir = -dir;
  vec2 perp = vec2(-dir.y, dir.x);
  float hw = max(a_line.y * u_px_per_m / a.w, a_line.z);
  float reach = hw + 1.0;
  a.xy += perp * (side * reach) / (0.5 * u_viewport) * a.w;
  v_edge = vec2(side * reach, hw);
  gl_Position = a;
}
