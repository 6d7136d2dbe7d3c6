// SPDX-License-Identifier: GPL-3.0-or-later
#version 330 core
// Swing tubes. Each vertex carries its sample's data so that colouring, dashing and dimming
// change with uniforms only, without rebuilding the mesh. Colour and lighting are worked out
// here, per vertex: llvmpipe pays for fragment work on every covered pixel, and a tube ten
// faces round shades smoothly enough with Gouraud lighting at studio-screen sizes.
// Styles: 0 the swing under study (speed or phase colours, lit), 1 the comparison swing (a
// single cool colour with a bright rim, so it never reads as the main swing), 2 the
// translucent 2-sigma band (colour = which sensor carried the path), 3 the club-head path,
// 4 the shadow on the floor.
layout(location = 0) in vec3 a_pos;
layout(location = 1) in vec3 a_normal;
layout(location = 2) in vec4 a_data;   // speed m/s, phase index, occluded 0/1, arc length m
layout(location = 3) in vec2 a_data2;  // time s, camera share 0..1
uniform mat4 u_view_proj;
uniform int u_style;
uniform int u_colour_mode;      // 0 speed, 1 phase
uniform float u_speed_max;
uniform vec3 u_phase_rgb[5];
uniform vec3 u_style_rgb;       // compare / club colour
uniform vec3 u_cam_rgb;         // band colour where the camera carried the path
uniform vec3 u_imu_rgb;         // band colour where the IMU carried it
uniform vec3 u_eye;
uniform vec3 u_light_dir;
uniform float u_alpha;
out vec4 v_rgba;                // lit colour and alpha
out vec3 v_dash;                // occluded 0/1, arc length m, time s

vec3 speed_ramp(float f)
{
  // Our own ramp: deep blue, teal, lime, amber, coral. Luminance rises with speed so it
  // still reads on a washed-out projector. Must match arcwise_scene_speed_rgb().
  const vec3 c0 = vec3(0.30, 0.45, 0.92);
  const vec3 c1 = vec3(0.13, 0.66, 0.68);
  const vec3 c2 = vec3(0.66, 0.86, 0.33);
  const vec3 c3 = vec3(0.98, 0.70, 0.24);
  const vec3 c4 = vec3(0.96, 0.36, 0.33);
  f = clamp(f, 0.0, 1.0) * 4.0;
  if (f < 1.0) return mix(c0, c1, f);
  if (f < 2.0) return mix(c1, c2, f - 1.0);
  if (f < 3.0) return mix(c2, c3, f - 2.0);
  return mix(c3, c4, f - 3.0);
}

void main()
{
  gl_Position = u_view_proj * vec4(a_pos, 1.0);
  v_dash = vec3(a_data.z, a_data.w, a_data2.x);
  vec3 n = normalize(a_normal);
  vec3 v = normalize(u_eye - a_pos);
  float occl = a_data.z;

  if (u_style == 4) {
    // Shadow on the floor: shows where the hands are over the stance, which a tube floating
    // in space does not.
    v_rgba = vec4(0.0, 0.0, 0.0, u_alpha);
    return;
  }
  vec3 base;
  if (u_style == 0) {
    int ph = clamp(int(a_data.y + 0.5), 0, 4);
    base = u_colour_mode == 0 ? speed_ramp(a_data.x / u_speed_max) : u_phase_rgb[ph];
  } else if (u_style == 2) {
    base = mix(u_imu_rgb, u_cam_rgb, clamp(a_data2.y, 0.0, 1.0));
  } else {
    base = u_style_rgb;
  }
  if (occl > 0.5 && u_style != 2) {
    // Bridged by the IMU and the motion model: grey-white, so it never looks like tracked
    // speed (the fragment shader cuts the dashes).
    float grey = dot(base, vec3(0.30, 0.59, 0.11));
    base = mix(vec3(grey), vec3(0.82, 0.83, 0.86), 0.7);
  }
  if (u_style == 2) {
    // Band: brighter at grazing angles so its width reads without hiding the tube inside.
    float rim = 1.0 - abs(dot(n, v));
    v_rgba = vec4(base, u_alpha * (0.35 + 0.65 * rim));
    return;
  }
  float diff = max(dot(n, u_light_dir), 0.0);
  float hemi = 0.55 + 0.45 * n.z;
  vec3 h = normalize(u_light_dir + v);
  float spec = pow(max(dot(n, h), 0.0), 32.0);
  vec3 c = base * (0.35 * hemi + 0.70 * diff) + vec3(0.25 * spec);
  if (u_style == 1) {
    float rim = pow(1.0 - max(dot(n, v), 0.0), 1.5);
    c = base * (0.45 + 0.35 * diff) + vec3(0.9) * rim * 0.6;
  }
  v_rgba = vec4(c, u_alpha);
}
