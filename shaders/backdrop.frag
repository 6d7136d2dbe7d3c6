// SPDX-License-Identifier: GPL-3.0-or-later
#version 330 core
// Studio backdrop: a dark slate wall, lighter toward the horizon, with a soft vignette so the
// swing in the middle stands out on a large screen.
in vec2 v_uv;
uniform vec3 u_horizon;
out vec4 frag;
void main()
{
  vec3 top = u_horizon * 0.45;
  vec3 c = mix(u_horizon, top, smoothstep(0.15, 1.0, v_uv.y));
  vec2 d = v_uv - vec2(0.5);
  c *= 1.0 - 0.35 * dot(d, d);
  frag = vec4(c, 1.0);
}
