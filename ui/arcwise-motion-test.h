/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "arcwise-window.h"

G_BEGIN_DECLS

/* Test hook (environment ARCWISE_MOTION_TEST_DIR=DIR) for playback and the camera gestures.
 * Playback: at each speed (1, 1/2, 1/4, 1/8) the swing plays from its start for a dozen frames
 * while every frame's GdkFrameClock frame time and the marker's time are written down; frame
 * steps forward and back; played with loop on from near the end (the wrap) and with loop off
 * to the end. Gestures: with ARCWISE_MOTION_TEST_XDOTOOL naming the xdotool program, real
 * pointer input (XTest, through the X server) drags with the left button (orbit), the right
 * button and shift + left (pan) and turns the wheel (zoom), so the stage's own GtkGestureDrag
 * and GtkEventControllerScroll handle them; a touchpad pinch, which XTest cannot make, is the
 * stage's own GtkGestureZoom emitting "begin" and "scale-changed". Then real key presses
 * (XTest, after focusing the window): Right x3, [ x2, L, then Space. The camera before and after
 * each, the stage's size and view are written to DIR/motion-report.txt, pictures to DIR; then
 * the program quits. tests/ui/check-motion.py judges them. */
void arcwise_motion_test_start(ArcwiseWindow *win, const char *dir, GtkWindow *caution);

G_END_DECLS
