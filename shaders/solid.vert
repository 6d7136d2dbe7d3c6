// SPDX-License-Identifier: GPL-3.0-or-later
#version 330 core
// Spheres (ball, markers): a unit sphere scaled and moved by u_model.
layout(location = 0) in vec3 a_pos;
uniform mat4 u_view_proj;
uniform vec4 u_centre_radius;
out vec3 v_normal;
out vec3 v_world;
void main()
{
  v_normal = a_pos;
  v_world = u_centre_radius.xyz + a_pos * u_centre_radius.w;
  gl_Position = u_view_proj * vec4(v_world, 1.0);
}
