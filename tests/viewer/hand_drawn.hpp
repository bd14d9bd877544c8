// tests/viewer/hand_drawn.hpp — draw data written by hand, vertex by vertex, so that a test
// knows exactly which triangles, UVs, colours and clip rectangles the rasterizer receives
// (no ImGui context needed).
#pragma once

#include <memory>
#include <vector>

#include <imgui.h>

namespace occulta::test {

struct HandDrawn {
  std::unique_ptr<ImDrawList> list = std::make_unique<ImDrawList>(nullptr);
  ImDrawList* lists[1] = {list.get()};
  ImDrawData data;

  HandDrawn(float width, float height) {
    data.Valid = true;
    data.CmdLists = lists;
    data.CmdListsCount = 1;
    data.DisplayPos = ImVec2(0, 0);
    data.DisplaySize = ImVec2(width, height);
    data.FramebufferScale = ImVec2(1, 1);
  }

  // Starts a command: the triangles added next are clipped to `clip` and use `texture`.
  void command(ImVec4 clip, ImTextureID texture) {
    ImDrawCmd cmd;
    cmd.ClipRect = clip;
    cmd.TextureId = texture;
    cmd.VtxOffset = 0;
    cmd.IdxOffset = unsigned(list->IdxBuffer.Size);
    cmd.ElemCount = 0;
    list->CmdBuffer.push_back(cmd);
  }

  ImDrawIdx vertex(float x, float y, float u, float v, ImU32 colour) {
    ImDrawVert vert;
    vert.pos = ImVec2(x, y);
    vert.uv = ImVec2(u, v);
    vert.col = colour;
    list->VtxBuffer.push_back(vert);
    return ImDrawIdx(list->VtxBuffer.Size - 1);
  }

  void triangle(ImDrawIdx a, ImDrawIdx b, ImDrawIdx c) {
    for (ImDrawIdx i : {a, b, c}) list->IdxBuffer.push_back(i);
    list->CmdBuffer.back().ElemCount += 3;
    data.TotalIdxCount = list->IdxBuffer.Size;
    data.TotalVtxCount = list->VtxBuffer.Size;
  }

  // A rectangle as ImDrawList::PrimRectUV writes it: corners a (top left), b, c, d
  // clockwise on screen, triangles (a, b, c), (a, c, d) — the rasterizer's rectangle path.
  void rect(ImVec2 p0, ImVec2 p1, ImVec2 uv0, ImVec2 uv1, ImU32 colour) {
    const ImDrawIdx a = vertex(p0.x, p0.y, uv0.x, uv0.y, colour), b = vertex(p1.x, p0.y, uv1.x, uv0.y, colour);
    const ImDrawIdx c = vertex(p1.x, p1.y, uv1.x, uv1.y, colour), d = vertex(p0.x, p1.y, uv0.x, uv1.y, colour);
    triangle(a, b, c);
    triangle(a, c, d);
  }

  // The same rectangle split along the other diagonal, (a, b, d), (b, c, d): not the
  // pattern the rectangle path recognises, so the general triangle path draws it.
  void rect_as_triangles(ImVec2 p0, ImVec2 p1, ImVec2 uv0, ImVec2 uv1, ImU32 colour) {
    const ImDrawIdx a = vertex(p0.x, p0.y, uv0.x, uv0.y, colour), b = vertex(p1.x, p0.y, uv1.x, uv0.y, colour);
    const ImDrawIdx c = vertex(p1.x, p1.y, uv1.x, uv1.y, colour), d = vertex(p0.x, p1.y, uv0.x, uv1.y, colour);
    triangle(a, b, d);
    triangle(b, c, d);
  }
};

}  // namespace occulta::test
