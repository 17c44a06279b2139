#pragma once
// The application window: a GLFW window with an OpenGL 3 context and Dear
// ImGui set up on it, the font embedded in the program (DejaVu Sans), and
// an event loop that sleeps while nothing happens (battery).
// One implementation per platform (app_window_glfw.cpp here).

#include <memory>
#include <string>

#include "core/result.h"

namespace furrow {

class AppWindow {
 public:
  // Creates the window and the ImGui context. `ui_scale` multiplies the
  // screen's content scale for fonts and sizes.
  static Result<std::unique_ptr<AppWindow>> create(const std::string& title, int width, int height, float ui_scale);
  ~AppWindow();

  bool should_close() const;
  // Waits for input (at most `timeout_s`), then starts an ImGui frame.
  void begin_frame(double timeout_s);
  // Renders the frame and shows it.
  void end_frame(float r, float g, float b);
  // Writes the last rendered frame as PNG (call after end_frame).
  Status save_screenshot(const std::string& path) const;
  float scale() const { return scale_; }
  // Rebuilds fonts and sizes for a new UI scale. Call between frames.
  void set_ui_scale(float ui_scale);
  void set_title(const std::string& title);
  // The screen's content scale (1 on a 96 dpi screen). When the window moves
  // to a screen with another content scale, or the system setting changes,
  // begin_frame rebuilds fonts and sizes before the next frame.
  float content_scale() const { return content_scale_; }
  // Fonts in the atlas: 0 normal, 1 large (1.5x), 2 huge (2.2x), rendered at
  // their own sizes so that large text stays sharp.
  static constexpr int kFontNormal = 0, kFontLarge = 1, kFontHuge = 2;

  struct Impl;   // defined by the platform's implementation

 private:
  AppWindow() = default;
  std::unique_ptr<Impl> impl_;
  float scale_ = 1.0f;
  float ui_scale_ = 1.0f;
  float content_scale_ = 1.0f;
  std::string title_;
};

}  // namespace furrow
