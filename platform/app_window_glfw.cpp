#include <GLFW/glfw3.h>
#include <imgui.h>
#include <imgui_impl_glfw.h>
#include <imgui_impl_opengl3.h>

#include <bitset>
#include <vector>

#include "platform/app_window.h"

#define STB_IMAGE_WRITE_IMPLEMENTATION
#pragma GCC diagnostic push
#pragma GCC diagnostic ignored "-Wmissing-field-initializers"
#include <stb_image_write.h>
#pragma GCC diagnostic pop

extern "C" const unsigned char furrow_font_ttf_begin[];
extern "C" const unsigned char furrow_font_ttf_end[];

namespace furrow {

// Base font size in pixels at scale 1: large enough to read at arm's length
// in sunlight (common practice for outdoor tablets; our choice).
constexpr float kBaseFontPx = 24.0f;

struct AppWindow::Impl {
  GLFWwindow* window = nullptr;
  int width = 0, height = 0;
  float clear[3] = {1, 1, 1};
  // Keys pressed since the last frame began, and releases held back for the
  // next frame (see key_callback).
  std::bitset<GLFW_KEY_LAST + 1> pressed;
  struct Release { int key, scancode, mods; };
  std::vector<Release> held;
};

namespace {

// ImGui reads a key's state once per frame. A barcode scanner or a quick
// keypress delivers press and release together, and the key would never be
// seen down (Enter after a scanned label lost). A release that follows its
// press within one frame is therefore held back until the next frame.
void key_callback(GLFWwindow* w, int key, int scancode, int action, int mods) {
  auto* impl = static_cast<AppWindow::Impl*>(glfwGetWindowUserPointer(w));
  if (impl && key >= 0 && key <= GLFW_KEY_LAST) {
    if (action == GLFW_PRESS) {
      impl->pressed.set(static_cast<size_t>(key));
    } else if (action == GLFW_RELEASE && impl->pressed.test(static_cast<size_t>(key))) {
      impl->held.push_back({key, scancode, mods});
      return;
    }
  }
  ImGui_ImplGlfw_KeyCallback(w, key, scancode, action, mods);
}

}  // namespace

Result<std::unique_ptr<AppWindow>> AppWindow::create(const std::string& title, int width, int height, float ui_scale) {
  if (!glfwInit()) return make_problem("cannot start the window system (no display?)");
  glfwWindowHint(GLFW_CONTEXT_VERSION_MAJOR, 3);
  glfwWindowHint(GLFW_CONTEXT_VERSION_MINOR, 3);
  glfwWindowHint(GLFW_OPENGL_PROFILE, GLFW_OPENGL_CORE_PROFILE);
  GLFWwindow* w = glfwCreateWindow(width, height, title.c_str(), nullptr, nullptr);
  if (!w) {
    glfwTerminate();
    return make_problem("cannot open a window with OpenGL 3.3");
  }
  glfwMakeContextCurrent(w);
  glfwSwapInterval(1);
  std::unique_ptr<AppWindow> out(new AppWindow());
  out->impl_ = std::make_unique<Impl>();
  out->impl_->window = w;
  out->title_ = title;
  float sx = 1, sy = 1;
  glfwGetWindowContentScale(w, &sx, &sy);
  out->content_scale_ = sx;
  IMGUI_CHECKVERSION();
  ImGui::CreateContext();
  ImGui::GetIO().IniFilename = nullptr;
  out->set_ui_scale(ui_scale);
  ImGui_ImplGlfw_InitForOpenGL(w, true);
  glfwSetWindowUserPointer(w, out->impl_.get());
  glfwSetKeyCallback(w, key_callback);   // in place of the backend's own, which it forwards to
  ImGui_ImplOpenGL3_Init("#version 330");
  return out;
}

void AppWindow::set_ui_scale(float ui_scale) {
  ui_scale_ = ui_scale;
  scale_ = content_scale_ * ui_scale;
  ImGuiIO& io = ImGui::GetIO();
  io.Fonts->Clear();
  ImFontConfig config;
  config.FontDataOwnedByAtlas = false;
  for (float size : {1.0f, 1.5f, 2.2f})
    io.Fonts->AddFontFromMemoryTTF(const_cast<unsigned char*>(furrow_font_ttf_begin),
                                   static_cast<int>(furrow_font_ttf_end - furrow_font_ttf_begin),
                                   kBaseFontPx * size * scale_, &config);
  ImGui::GetStyle() = ImGuiStyle();
  ImGui::GetStyle().ScaleAllSizes(scale_);
  if (ImGui::GetIO().BackendRendererUserData) {
    ImGui_ImplOpenGL3_DestroyFontsTexture();
    ImGui_ImplOpenGL3_CreateFontsTexture();
  }
}

AppWindow::~AppWindow() {
  if (!impl_) return;
  ImGui_ImplOpenGL3_Shutdown();
  ImGui_ImplGlfw_Shutdown();
  ImGui::DestroyContext();
  glfwDestroyWindow(impl_->window);
  glfwTerminate();
}

bool AppWindow::should_close() const { return glfwWindowShouldClose(impl_->window); }

void AppWindow::set_title(const std::string& title) {
  if (title == title_) return;
  title_ = title;
  glfwSetWindowTitle(impl_->window, title.c_str());
}

void AppWindow::begin_frame(double timeout_s) {
  // The last frame saw these keys down: now they go up.
  for (const Impl::Release& r : impl_->held)
    ImGui_ImplGlfw_KeyCallback(impl_->window, r.key, r.scancode, GLFW_RELEASE, r.mods);
  impl_->held.clear();
  impl_->pressed.reset();
  if (timeout_s > 0) glfwWaitEventsTimeout(timeout_s);
  else glfwPollEvents();
  // GLFW reports a new content scale (another monitor, a changed system
  // setting) as a window event; the query below sees it after the wait.
  float sx = 1, sy = 1;
  glfwGetWindowContentScale(impl_->window, &sx, &sy);
  if (sx > 0 && sx != content_scale_) {
    content_scale_ = sx;
    set_ui_scale(ui_scale_);
  }
  ImGui_ImplOpenGL3_NewFrame();
  ImGui_ImplGlfw_NewFrame();
  ImGui::NewFrame();
}

void AppWindow::end_frame(float r, float g, float b) {
  ImGui::Render();
  glfwGetFramebufferSize(impl_->window, &impl_->width, &impl_->height);
  glViewport(0, 0, impl_->width, impl_->height);
  impl_->clear[0] = r;
  impl_->clear[1] = g;
  impl_->clear[2] = b;
  glClearColor(r, g, b, 1.0f);
  glClear(GL_COLOR_BUFFER_BIT);
  ImGui_ImplOpenGL3_RenderDrawData(ImGui::GetDrawData());
  glfwSwapBuffers(impl_->window);
}

Status AppWindow::save_screenshot(const std::string& path) const {
  const int w = impl_->width, h = impl_->height;
  std::vector<unsigned char> pixels(static_cast<size_t>(w) * h * 4);
  // The front buffer is not readable everywhere (Xvfb, Mesa): draw the last
  // frame's lists again into the back buffer and read that.
  glViewport(0, 0, w, h);
  glClearColor(impl_->clear[0], impl_->clear[1], impl_->clear[2], 1.0f);
  glClear(GL_COLOR_BUFFER_BIT);
  ImGui_ImplOpenGL3_RenderDrawData(ImGui::GetDrawData());
  glFinish();
  glReadBuffer(GL_BACK);
  glPixelStorei(GL_PACK_ALIGNMENT, 1);
  glReadPixels(0, 0, w, h, GL_RGBA, GL_UNSIGNED_BYTE, pixels.data());
  stbi_flip_vertically_on_write(1);
  if (!stbi_write_png(path.c_str(), w, h, 4, pixels.data(), w * 4)) return make_problem("cannot write " + path);
  return ok_status();
}

}  // namespace furrow
