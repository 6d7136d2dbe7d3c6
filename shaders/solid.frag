// SPDX-License-Identifier: GPL-3.0-or-later
#version 330 core
in vec3 v_normal;
in vec3 v_world;
uniform vec3 u_rgb;
uniform vec3 u_eye;
uniform vec3 u_light_dir;
uniform float u_glow;          // 0 matte, 1 self-lit marker
out vec4 frag;
void main()
{
  vec3 n = normalize(v_normal);
  vec3 v = normalize(u_eye - v_world);
  float diff = max(dot(n, u_light_dir), 0.0);
  float hemi = 0.5 + 0.5 * n.z;
  vec3 h = normalize(u_light_dir + v);
  float spec = pow(max(dot(n, h), 0.0), 48.0);
  vec3 c = u_rgb * (0.30 * hemi + 0.75 * diff) + vec3(0.35 * spec);
  float rim = pow(1.0 - max(dot(n, v), 0.0), 2.0);
  c = mix(c, u_rgb * 1.2 + rim * 0.4, u_glow);
  frag = vec4(c, 1.0);
}
