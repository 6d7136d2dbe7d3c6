// SPDX-License-Identifier: GPL-3.0-or-later
#version 330 core
// Coverage of a line from its distance to the centre line: full inside the half-width, a
// linear falloff over the last pixel (sub-pixel lines get proportionally fainter).
in vec4 v_rgba;
in vec2 v_edge;
out vec4 frag;
void main()
{
  float cover = clamp(v_edge.y + 0.5 - abs(v_edge.x), 0.0, 1.0);
  frag = vec4(v_rgba.rgb, v_rgba.a * cover);
}
