// map_file_sink.hpp (CLI-private) -- `zeeline map` writes its maps into the map file as the rows are
// finished (FieldMapSink of maps/field_maps.hpp over io/field_map_writer.hpp's FieldMapFileStream), so the
// run holds no whole map (except the four the azimuth disambiguation needs, FieldMaps::slots).
//
// The file is built under another name and moved onto the output only by Commit: a temporary file, or with
// --resume OUTPUT.partial, which is kept when the run stops early (with OUTPUT.checkpoint, which counts its
// finished rows) and reopened by the next --resume run. Commit writes what needs the whole map (the
// disambiguated B_AZIM and AZIM_PICK), drops the maps without a finite value and moves the file into place.
// Failures to create or write the file are OutputError (exit 3).
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "zeeline/io/field_map_writer.hpp"
#include "zeeline/maps/field_maps.hpp"

namespace zeeline::cli {

class MapFileSink : public FieldMapSink {
 public:
  /// `layout`: MapHduLayout. `partial_path` empty: a temporary file; otherwise the --resume partial file.
  MapFileSink(std::string output, std::vector<ImageHdu> layout, std::string spatial_wcs_header, FitsWriteOptions options,
              std::string partial_path);
  ~MapFileSink() override;

  void Begin(long rows_done, FieldMaps& maps) override;
  void Put(const FieldMaps& block, long first_row) override;
  void Sync() override;
  /// After the run (FieldMapEngine::Finish): the rows that need the whole map, the empty maps dropped, the
  /// file moved onto the output. Returns the number of image HDUs in the file.
  std::size_t Commit(const FieldMaps& maps);
  /// Drops the working file now (a temporary one is removed; a partial file is kept).
  void Abandon() { stream_.reset(); }

 private:
  std::string output_, wcs_, partial_;
  std::vector<ImageHdu> layout_;
  FitsWriteOptions options_;
  std::unique_ptr<FieldMapFileStream> stream_;
  std::vector<int> slot_of_;  ///< per layout HDU: the map slot, or -1
  int method_hdu_ = -1, quality_hdu_ = -1, pick_hdu_ = -1;
};

}  // namespace zeeline::cli
