// SPDX-License-Identifier: GPL-3.0-or-later
#version 330 core
// The studio floor, drawn procedurally so that it costs one pass: a 0.5 m grid with 0.1 m
// subdivisions near the ball, the target line (+x from the ball), a short aim arrow, and two
// foot marks for the stance. Lines are anti-aliased with screen-space derivatives.
in vec3 v_world;
uniform vec3 u_floor_rgb;
uniform vec3 u_grid_rgb;
uniform vec3 u_target_rgb;
uniform vec3 u_foot_rgb;
uniform float u_handed;        // +1 right-handed (player at +y), -1 left-handed
uniform vec3 u_eye;
out vec4 frag;

float grid_line(vec2 p, float step, float width_px)
{
  vec2 g = abs(fract(p / step - 0.5) - 0.5) * step;
  vec2 w = fwidth(p) * width_px;
  vec2 l = 1.0 - smoothstep(vec2(0.0), w, g);
  return max(l.x, l.y);
}

float rounded_box(vec2 p, vec2 half_size, float r)
{
  vec2 q = abs(p) - half_size + vec2(r);
  return length(max(q, 0.0)) + min(max(q.x, q.y), 0.0) - r;
}

void main()
{
  vec2 p = v_world.xy;
  vec3 c = u_floor_rgb;
  float dist = length(v_world - u_eye);
  float fade = exp(-0.06 * dist);

  float major = grid_line(p, 0.5, 1.2);
  float minor = grid_line(p, 0.1, 0.8) * (1.0 - smoothstep(1.0, 2.5, length(p)));
  c = mix(c, u_grid_rgb, (0.55 * major + 0.22 * minor) * fade);

  // Target line: from 1 m behind the ball to 6 m ahead, brighter ahead of the ball.
  float aa = fwidth(p.y) * 1.5;
  float tl = 1.0 - smoothstep(0.006, 0.006 + aa, abs(p.y));
  tl *= step(-1.0, p.x) * (1.0 - smoothstep(5.0, 6.0, p.x));
  c = mix(c, u_target_rgb, tl * mix(0.45, 0.95, step(0.0, p.x)));

  // Aim chevron 1.5 m ahead of the ball.
  vec2 a = p - vec2(1.5, 0.0);
  float chev = abs(abs(a.y) - (-a.x) * 0.8);
  float chev_mask = step(-0.12, a.x) * step(a.x, 0.0);
  c = mix(c, u_target_rgb, (1.0 - smoothstep(0.01, 0.01 + aa, chev)) * chev_mask);

  // Stance: two foot marks parallel to the target line, shoulder width apart, about 0.65 m
  // from the ball toward the player (the lie of a mid iron, common practice).
  float side = u_handed;
  vec2 lead = vec2(0.22, 0.65 * side);
  vec2 trail = vec2(-0.22, 0.65 * side);
  float f = min(rounded_box(p - lead, vec2(0.05, 0.135), 0.04),
                rounded_box(p - trail, vec2(0.05, 0.135), 0.04));
  float fw = fwidth(f) * 1.5;
  float fill = 1.0 - smoothstep(0.0, fw, f);
  float rim = 1.0 - smoothstep(0.0, fw, abs(f + 0.006) - 0.004);
  c = mix(c, u_foot_rgb * 0.55, fill * 0.6);
  c = mix(c, u_foot_rgb, rim * 0.9);

  // A ring around the ball so a real-size ball is easy to find on a big screen.
  float rr = abs(length(p) - 0.075);
  c = mix(c, vec3(0.92), (1.0 - smoothstep(0.004, 0.004 + aa, rr)) * 0.8);

  // Soft contact shadow under the ball.
  float sh = exp(-dot(p, p) / (2.0 * 0.03 * 0.03));
  c *= 1.0 - 0.55 * sh;

  frag = vec4(c, 1.0);
}
