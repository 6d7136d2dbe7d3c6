// SPDX-License-Identifier: GPL-3.0-or-later
#version 330 core
// The studio floor's fill: one flat colour. The markings on it are drawn as geometry
// (mark.vert), so the half of the screen the floor covers costs almost nothing per pixel.
uniform vec3 u_floor_rgb;
out vec4 frag;
void main()
{
  frag = vec4(u_floor_rgb, 1.0);
}
