#include "cli/map_file_sink.hpp"

#include <algorithm>

#include "cli/commands.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline::cli {
namespace {

// The sink's file errors end the run with exit 3 (output not written), like a failed WriteFieldMaps.
template <class F>
auto AsOutputError(F&& f) -> decltype(f()) {
  try {
    return f();
  } catch (const FitsError& e) {
    throw OutputError(e.what());
  }
}

}  // namespace

MapFileSink::MapFileSink(std::string output, std::vector<ImageHdu> layout, std::string spatial_wcs_header,
                         FitsWriteOptions options, std::string partial_path)
    : output_(std::move(output)),
      wcs_(std::move(spatial_wcs_header)),
      partial_(std::move(partial_path)),
      layout_(std::move(layout)),
      options_(std::move(options)) {
  slot_of_.assign(layout_.size(), -1);
  for (std::size_t i = 0; i < layout_.size(); ++i) {
    const std::string& name = layout_[i].extname;
    for (int s = 0; s < kSlotCount; ++s)
      if (name == MapSlotName(s)) slot_of_[i] = s;
    if (name == map_names::kMethod) method_hdu_ = static_cast<int>(i);
    if (name == map_names::kQuality) quality_hdu_ = static_cast<int>(i);
    if (name == "AZIM_PICK") pick_hdu_ = static_cast<int>(i);
  }
}

MapFileSink::~MapFileSink() = default;

void MapFileSink::Begin(long rows_done, FieldMaps& maps) {
  AsOutputError([&] {
    stream_ = std::make_unique<FieldMapFileStream>(output_, layout_, wcs_, options_, partial_, rows_done > 0);
    for (std::size_t i = 0; i < layout_.size(); ++i) {
      const int s = slot_of_[i];
      if (s < 0 || rows_done == 0 || maps.slots[static_cast<std::size_t>(s)].empty()) continue;
      stream_->ReadRows(i, 0, rows_done, maps.slots[static_cast<std::size_t>(s)].data());  // WholeMapSlots
    }
  });
}

void MapFileSink::Put(const FieldMaps& block, long first_row) {
  AsOutputError([&] {
    for (std::size_t i = 0; i < layout_.size(); ++i) {
      if (slot_of_[i] >= 0)
        stream_->WriteRows(i, first_row, block.ny, block.slots[static_cast<std::size_t>(slot_of_[i])].data());
      else if (static_cast<int>(i) == method_hdu_)
        stream_->WriteRows(i, first_row, block.ny, block.method.data());
      else if (static_cast<int>(i) == quality_hdu_)
        stream_->WriteRows(i, first_row, block.ny, block.quality.data());
      // AZIM_PICK: at Commit
    }
  });
}

void MapFileSink::Sync() {
  AsOutputError([&] { stream_->Flush(); });
}

std::size_t MapFileSink::Commit(const FieldMaps& maps) {
  return AsOutputError([&] {
    std::vector<bool> keep(layout_.size(), true);
    for (std::size_t i = 0; i < layout_.size(); ++i) {
      const int s = slot_of_[i];
      if (s >= 0) keep[i] = (maps.slots_with_values >> s) & 1u;
    }
    if (pick_hdu_ >= 0) {  // the disambiguated azimuth replaces the one written row by row
      const auto& azimuth = maps.slots[kSlotAzimuth];
      for (std::size_t i = 0; i < layout_.size(); ++i)
        if (slot_of_[i] == kSlotAzimuth && !azimuth.empty()) stream_->WriteRows(i, 0, maps.ny, azimuth.data());
      if (maps.disambiguation.empty()) keep[static_cast<std::size_t>(pick_hdu_)] = false;
      else stream_->WriteRows(static_cast<std::size_t>(pick_hdu_), 0, maps.ny, maps.disambiguation.data());
    }
    stream_->Commit(keep);
    stream_.reset();
    return static_cast<std::size_t>(std::count(keep.begin(), keep.end(), true));
  });
}

}  // namespace zeeline::cli
