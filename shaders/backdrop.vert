// SPDX-License-Identifier: GPL-3.0-or-later
#version 330 core
// One triangle that covers the viewport; no vertex buffer needed.
out vec2 v_uv;
void main()
{
  vec2 p = vec2(float((gl_VertexID << 1) & 2), float(gl_VertexID & 2));
  v_uv = p;
  gl_Position = vec4(p * 2.0 - 1.0, 1.0, 1.0);
}
