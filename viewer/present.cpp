// viewer/present.cpp — see present.hpp.
#include "viewer/present.hpp"

#include <chrono>
#include <future>
#include <cstdlib>
#include <ostream>
#include <string>

#define GLFW_INCLUDE_NONE
#include <GLFW/glfw3.h>
#include <X11/Xlib.h>
#include <X11/Xutil.h>
#include <imgui.h>
#include <backends/imgui_impl_glfw.h>

#include "imaging/input_error.hpp"
#include "viewer/headless.hpp"
#include "viewer/raster.hpp"
#include "viewer/ui.hpp"

// GLFW's X11 native access, declared as glfw3native.h does (that header also wants
// Xrandr's headers, which nothing else here needs).
extern "C" {
::Display* glfwGetX11Display(void);
::Window glfwGetX11Window(GLFWwindow* window);
}

namespace occulta::viewer {
namespace {

// The few OpenGL 1.1 entry points and enums the texture path uses (GL/gl.h values), looked up
// through glfwGetProcAddress so that occulta does not link libGL (the reference tests link
// Mesa's OSMesa, which exports the same names).
using GLenum = unsigned int;
using GLuint = unsigned int;
using GLint = int;
using GLsizei = int;
using GLfloat = float;
constexpr GLenum GL_TEXTURE_2D = 0x0DE1, GL_RGBA = 0x1908, GL_UNSIGNED_BYTE = 0x1401, GL_QUADS = 0x0007,
                 GL_TEXTURE_MIN_FILTER = 0x2801, GL_TEXTURE_MAG_FILTER = 0x2800, GL_NEAREST = 0x2600,
                 GL_VERSION = 0x1F02, GL_RENDERER = 0x1F01, GL_COLOR_BUFFER_BIT = 0x4000, GL_UNPACK_ALIGNMENT = 0x0CF5,
                 GL_PROJECTION = 0x1701, GL_MODELVIEW = 0x1700;

struct Gl {
  void (*GenTextures)(GLsizei, GLuint*);
  void (*BindTexture)(GLenum, GLuint);
  void (*TexParameteri)(GLenum, GLenum, GLint);
  void (*PixelStorei)(GLenum, GLint);
  void (*TexImage2D)(GLenum, GLint, GLint, GLsizei, GLsizei, GLint, GLenum, GLenum, const void*);
  void (*Viewport)(GLint, GLint, GLsizei, GLsizei);
  void (*Clear)(GLenum);
  void (*Enable)(GLenum);
  void (*MatrixMode)(GLenum);
  void (*LoadIdentity)();
  void (*Begin)(GLenum);
  void (*End)();
  void (*TexCoord2f)(GLfloat, GLfloat);
  void (*Vertex2f)(GLfloat, GLfloat);
  const unsigned char* (*GetString)(GLenum);

  bool load() {
    bool all = true;
    auto get = [&](auto& fn, const char* name) {
      fn = reinterpret_cast<std::remove_reference_t<decltype(fn)>>(glfwGetProcAddress(name));
      all = all && fn != nullptr;
    };
    get(GenTextures, "glGenTextures");
    get(BindTexture, "glBindTexture");
    get(TexParameteri, "glTexParameteri");
    get(PixelStorei, "glPixelStorei");
    get(TexImage2D, "glTexImage2D");
    get(Viewport, "glViewport");
    get(Clear, "glClear");
    get(Enable, "glEnable");
    get(MatrixMode, "glMatrixMode");
    get(LoadIdentity, "glLoadIdentity");
    get(Begin, "glBegin");
    get(End, "glEnd");
    get(TexCoord2f, "glTexCoord2f");
    get(Vertex2f, "glVertex2f");
    get(GetString, "glGetString");
    return all;
  }
};

// Keys pressed since the last frame (ui.hpp Key), from GLFW's key callback; Dear ImGui's
// backend chains to it (it is installed first).
std::vector<Key> g_pressed;

void on_key(GLFWwindow*, int key, int, int action, int) {
  if (action != GLFW_PRESS && action != GLFW_REPEAT) return;
  switch (key) {
    case GLFW_KEY_LEFT: g_pressed.push_back(Key::left); break;
    case GLFW_KEY_RIGHT: g_pressed.push_back(Key::right); break;
    case GLFW_KEY_HOME: g_pressed.push_back(Key::home); break;
    case GLFW_KEY_END: g_pressed.push_back(Key::end); break;
    case GLFW_KEY_DELETE:
    case GLFW_KEY_BACKSPACE: g_pressed.push_back(Key::erase); break;
    default: break;
  }
}

std::string last_glfw_error() {
  const char* text = nullptr;
  glfwGetError(&text);
  return text ? text : "no reason given";
}

// The framebuffer as one textured quad filling the viewport; texel row 0 at the top.
void show_gl(Gl& gl, GLuint texture, const Framebuffer& fb) {
  gl.Viewport(0, 0, fb.width, fb.height);
  gl.Clear(GL_COLOR_BUFFER_BIT);
  gl.BindTexture(GL_TEXTURE_2D, texture);
  gl.PixelStorei(GL_UNPACK_ALIGNMENT, 4);
  gl.TexImage2D(GL_TEXTURE_2D, 0, GLint(GL_RGBA), fb.width, fb.height, 0, GL_RGBA, GL_UNSIGNED_BYTE, fb.pixels.data());
  gl.MatrixMode(GL_PROJECTION);
  gl.LoadIdentity();
  gl.MatrixMode(GL_MODELVIEW);
  gl.LoadIdentity();
  gl.Enable(GL_TEXTURE_2D);
  gl.Begin(GL_QUADS);
  gl.TexCoord2f(0, 1), gl.Vertex2f(-1, -1);
  gl.TexCoord2f(1, 1), gl.Vertex2f(1, -1);
  gl.TexCoord2f(1, 0), gl.Vertex2f(1, 1);
  gl.TexCoord2f(0, 0), gl.Vertex2f(-1, 1);
  gl.End();
}

// The framebuffer put on the window with XPutImage, in the visual's own channel layout
// (the masks of a TrueColor visual say where red, green and blue go in a 32-bit pixel).
void show_x11(GLFWwindow* window, const Framebuffer& fb, std::vector<std::uint32_t>& scratch) {
  ::Display* display = glfwGetX11Display();
  const ::Window xwindow = glfwGetX11Window(window);
  XWindowAttributes attributes;
  if (!XGetWindowAttributes(display, xwindow, &attributes)) return;
  Visual* visual = attributes.visual;
  auto shift_of = [](unsigned long mask) {
    int s = 0;
    while (mask && !(mask & 1)) mask >>= 1, ++s;
    return s;
  };
  const int rs = shift_of(visual->red_mask), gs = shift_of(visual->green_mask), bs = shift_of(visual->blue_mask);
  scratch.resize(fb.pixels.size());
  for (std::size_t i = 0; i < fb.pixels.size(); ++i) {
    const std::uint32_t p = fb.pixels[i];
    scratch[i] = ((p & 0xFF) << rs) | (((p >> 8) & 0xFF) << gs) | (((p >> 16) & 0xFF) << bs);
  }
  XImage* image = XCreateImage(display, visual, unsigned(attributes.depth), ZPixmap, 0, reinterpret_cast<char*>(scratch.data()),
                               unsigned(fb.width), unsigned(fb.height), 32, 0);
  if (!image) return;
  const GC gc = DefaultGC(display, DefaultScreen(display));
  XPutImage(display, xwindow, gc, image, 0, 0, 0, 0, unsigned(fb.width), unsigned(fb.height));
  image->data = nullptr;  // ours: XDestroyImage must not free it
  XDestroyImage(image);
  XFlush(display);
}

}  // namespace

std::string autosave_path(const WindowState& state) {
  if (!state.track_path.empty()) return state.track_path + ".autosave";
  return (state.event_id.empty() ? std::string("occulta") : state.event_id) + ".autosave.track.json";
}

int present(WindowState state, std::vector<ViewSource> sources, const std::vector<Action>& script, const Session& session,
            std::ostream& err) {
  glfwSetErrorCallback(nullptr);
  if (!glfwInit()) {
    err << "occulta view: there is no display to open a window on (" << last_glfw_error()
        << "); draw the window into a PNG instead with --snapshot out.png.\n";
    return 1;
  }
  // An OpenGL ≥ 2.1 context if the display gives one (GLX), else a window without any.
  glfwWindowHint(GLFW_CLIENT_API, GLFW_OPENGL_API);
  glfwWindowHint(GLFW_CONTEXT_VERSION_MAJOR, 2);
  glfwWindowHint(GLFW_CONTEXT_VERSION_MINOR, 1);
  GLFWwindow* window = glfwCreateWindow(state.width, state.height, "occulta", nullptr, nullptr);
  Gl gl{};
  bool use_gl = window != nullptr;
  if (use_gl) {
    glfwMakeContextCurrent(window);
    use_gl = gl.load();
    if (!use_gl) glfwDestroyWindow(window), window = nullptr;
  }
  std::string why_not_gl;
  if (!use_gl) {
    why_not_gl = last_glfw_error();
    glfwDefaultWindowHints();
    glfwWindowHint(GLFW_CLIENT_API, GLFW_NO_API);
    window = glfwCreateWindow(state.width, state.height, "occulta", nullptr, nullptr);
    if (!window) {
      err << "occulta view: no window could be opened on this display (" << last_glfw_error()
          << "); draw the window into a PNG instead with --snapshot out.png.\n";
      glfwTerminate();
      return 1;
    }
  }
  GLuint texture = 0;
  if (use_gl) {
    glfwSwapInterval(1);
    gl.GenTextures(1, &texture);
    gl.BindTexture(GL_TEXTURE_2D, texture);
    gl.TexParameteri(GL_TEXTURE_2D, GL_TEXTURE_MIN_FILTER, GLint(GL_NEAREST));
    gl.TexParameteri(GL_TEXTURE_2D, GL_TEXTURE_MAG_FILTER, GLint(GL_NEAREST));
    err << "occulta view: showing frames as an OpenGL texture (OpenGL " << gl.GetString(GL_VERSION) << ", "
        << gl.GetString(GL_RENDERER) << ").\n";
  } else {
    err << "occulta view: no OpenGL context (" << why_not_gl << "); showing frames with X11 image puts.\n";
  }

  ImGuiContext* context = ImGui::CreateContext();
  ImGuiIO& io = ImGui::GetIO();
  io.IniFilename = nullptr;
  io.LogFilename = nullptr;
  io.BackendFlags |= ImGuiBackendFlags_RendererHasVtxOffset;
  const HeadlessOptions look;  // the same font, size and background as the snapshots
  const Texture font = load_font(look.font_file, look.font_pixels);
  glfwSetKeyCallback(window, on_key);
  if (use_gl) ImGui_ImplGlfw_InitForOpenGL(window, true);
  else ImGui_ImplGlfw_InitForOther(window, true);

  std::vector<ViewPictures> views;
  std::vector<std::uint32_t> scratch;
  WindowCache cache;  // colourings and outlines the next frames reuse (window_cache.hpp)
  {
    Loader loader(std::move(sources));
    bool script_applied = false;
    std::future<action::FitDone> fitting;  // the measurement running on a worker thread
    auto last_autosave = std::chrono::steady_clock::now();
    auto last_step = std::chrono::steady_clock::now();
    while (!state.quit) {
      glfwWaitEventsTimeout(state.playing || !loader.done() || fitting.valid() ? 0.02 : 0.1);
      if (glfwWindowShouldClose(window)) {  // the window manager's close: as q, asking first
        glfwSetWindowShouldClose(window, GLFW_FALSE);
        apply(state, action::Quit{});
        if (state.quit) break;
      }
      for (ViewPictures& v : loader.take_finished()) {
        views.push_back(std::move(v));
        apply(state, action::Timeline{frame_times(views)});
        apply(state, action::ViewFrames{views.back().name, frame_times(views.back())});
      }
      if (loader.done() && !script_applied) {
        for (const ViewPictures& v : views)
          if (!v.error.empty()) err << "occulta view: " << v.error << '\n';
        err << "occulta view: loaded " << views.size() << " view(s), " << state.timeline_utc_s.size() << " frame times.\n";
        run_script(state, views, script, session);
        script_applied = true;

        if (state.width > 0) glfwSetWindowSize(window, state.width, state.height);
      }
      int w = 0, h = 0;
      glfwGetFramebufferSize(window, &w, &h);
      if (w <= 0 || h <= 0) continue;  // minimised
      if (w != state.width || h != state.height) apply(state, action::Resize{w, h});
      const auto now = std::chrono::steady_clock::now();
      if (state.playing && std::chrono::duration<double>(now - last_step).count() >= kPlayStepS) {
        apply(state, action::Step{1, true});
        last_step = now;
      }

      const Loader::Progress p = loader.progress();
      const LoadingShown loading{loader.done(), p.view, p.views, p.frame, p.frames, p.loading};
      const std::uint64_t made_before = cache.made;
      const std::vector<ShownView> shown = shown_views(state, views, &cache);
      const bool made_nothing = cache.made == made_before;
      std::vector<Texture> textures = textures_of(shown);
      textures.push_back(font);
      ImGui_ImplGlfw_NewFrame();
      ImGui::NewFrame();
      const std::vector<Action> actions = draw_window(state, shown, views, loading, g_pressed);
      g_pressed.clear();
      ImGui::Render();
      Framebuffer fb(w, h, look.background);
      render(*ImGui::GetDrawData(), textures, fb);
      if (use_gl) {
        show_gl(gl, texture, fb);
        glfwSwapBuffers(window);
      } else {
        show_x11(window, fb, scratch);
      }
      for (const Action& a : actions) {
        // A fit asked for while none runs: on the worker; the window keeps drawing.
        if (const auto* f = std::get_if<action::Fit>(&a)) {
          if (fitting.valid()) continue;
          apply(state, *f);
          if (state.fit_request.empty()) continue;
          const WindowState asked = state;
          fitting = std::async(std::launch::async, [&session, asked, imaged = imaging_of(views)] {
            return run_fit(asked, session, asked.fit_request, imaged);
          });
          continue;
        }
        perform(state, views, session, a);
      }
      if (fitting.valid() && fitting.wait_for(std::chrono::seconds(0)) == std::future_status::ready) apply(state, fitting.get());
      // A quiet frame (nothing asked, nothing to make) is shown: the neighbouring times'
      // pictures and outlines made meanwhile, so that a step or playing finds them ready
      // (window_cache.hpp). Not while a control is dragged: that frame's own work comes first.
      if (loader.done() && actions.empty() && made_nothing) (void)prepare_neighbours(cache, state, views);
      // Unsaved points are never lost silently: an autosave every kAutosaveS.
      if (state.unsaved && std::chrono::duration<double>(now - last_autosave).count() >= kAutosaveS) {
        last_autosave = now;
        try {
          fit::write_track(autosave_path(state), track_of(state));
        } catch (const imaging::InputError& e) {
          apply(state, action::Note{e.what()});
        }
      }
    }
    if (fitting.valid()) fitting.wait();  // the worker reads the session: let it finish
    if (state.unsaved && !state.points.empty()) {  // quit anyway: the autosave keeps them
      try {
        fit::write_track(autosave_path(state), track_of(state));
        err << "occulta view: unsaved points kept in " << autosave_path(state) << ".\n";
      } catch (const imaging::InputError& e) {
        err << "occulta view: " << e.what() << '\n';
      }
    }
  }
  ImGui_ImplGlfw_Shutdown();
  ImGui::DestroyContext(context);
  glfwDestroyWindow(window);
  glfwTerminate();
  return 0;
}

}  // namespace occulta::viewer
