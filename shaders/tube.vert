// SPDX-License-Identifier: GPL-3.0-or-later
#version 330 core
// Swing tubes. Each vertex carries its sample's data so that colouring, dashing and dimming
// change with uniforms only, without rebuilding the mesh.
layout(location = 0) in vec3 a_pos;
layout(location = 1) in vec3 a_normal;
layout(location = 2) in vec4 a_data;   // speed m/s, phase index, occluded 0/1, arc length m
layout(location = 3) in vec2 a_data2;  // time s, camera share 0..1
uniform mat4 u_view_proj;
uniform int u_flatten;       // 1: squash onto the floor (the path's shadow)
out vec3 v_world;
out vec3 v_normal;
out vec4 v_data;
out vec2 v_data2;
void main()
{
  v_world = a_pos;
  if (u_flatten == 1)
    v_world.z = 0.002;
  v_normal = a_normal;
  v_data = a_data;
  v_data2 = a_data2;
  gl_Position = u_view_proj * vec4(v_world, 1.0);
}
