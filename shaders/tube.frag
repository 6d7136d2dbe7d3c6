// SPDX-License-Identifier: GPL-3.0-or-later
#version 330 core
// Stretches where the camera had lost the hands are dashed (4 cm dashes, 3 cm gaps) in every
// style but the band and the shadow: they are bridged by the IMU and the motion model, and a
// coach should see that. Samples after the playback marker are dimmed.
in vec4 v_rgba;
in vec3 v_dash;                 // occluded 0/1, arc length m, time s
uniform int u_style;
uniform float u_time_cut;       // samples after this time are dimmed (1e30 = none)
out vec4 frag;

void main()
{
  if (u_style < 2 || u_style == 3) {
    if (v_dash.x > 0.5 && fract(v_dash.y / 0.07) > 0.57) discard;
    frag = vec4(v_dash.z > u_time_cut ? v_rgba.rgb * 0.38 : v_rgba.rgb, v_rgba.a);
  } else {
    frag = v_rgba;
  }
}
