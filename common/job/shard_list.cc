#include "common/job/shard_list.h"

#include <unistd.h>

#include <algorithm>
#include <filesystem>
#include <fnmatch.h>
#include <map>
#include <system_error>

#include "common/base/json_location.h"
#include "common/port/file_identity.h"

namespace fs = std::filesystem;

namespace fanfold {
namespace {

bool HasWildcard(const std::string& s) { return s.find_first_of("*?[") != std::string::npos; }

// Splits "a/b/*.zst" into segments; keeps a leading "/" as the root.
std::vector<std::string> Segments(const std::string& pattern) {
  std::vector<std::string> out;
  size_t start = 0;
  while (start <= pattern.size()) {
    size_t slash = pattern.find('/', start);
    if (slash == std::string::npos) slash = pattern.size();
    std::string seg = pattern.substr(start, slash - start);
    if (!seg.empty() && seg != ".") out.push_back(seg);
    start = slash + 1;
  }
  return out;
}

struct Match {
  fs::path path;
  bool symlink = false;
};

// Appends to *out every regular file under dir matching segs[i..].
void Walk(const fs::path& dir, const std::vector<std::string>& segs, size_t i, std::vector<Match>* out) {
  std::error_code ec;
  if (i == segs.size()) {
    if (fs::is_regular_file(dir, ec)) out->push_back({dir, fs::is_symlink(dir, ec)});
    return;
  }
  const std::string& seg = segs[i];
  if (seg == "**") {
    Walk(dir, segs, i + 1, out);  // zero directories
    for (fs::directory_iterator it(dir, ec), end; !ec && it != end; it.increment(ec)) {
      if (it->is_directory(ec) && it->path().filename().string()[0] != '.') Walk(it->path(), segs, i, out);
    }
    return;
  }
  if (!HasWildcard(seg)) {
    Walk(dir / seg, segs, i + 1, out);
    return;
  }
  const bool leaf = i + 1 == segs.size();
  for (fs::directory_iterator it(dir, ec), end; !ec && it != end; it.increment(ec)) {
    std::string name = it->path().filename().string();
    if (name[0] == '.' && seg[0] != '.') continue;  // hidden files only by explicit pattern
    if (!GlobMatch(seg, name)) continue;
    // At the last segment the entry's own type (from the directory listing,
    // no stat unless it is a symlink) decides: a glob over thousands of
    // files should not cost a system call each just to be listed.
    std::error_code type_ec;
    if (!leaf) Walk(it->path(), segs, i + 1, out);
    else if (it->is_regular_file(type_ec)) out->push_back({it->path(), it->is_symlink(type_ec)});
  }
}

// The absolute, symlink-free form of each path, for sorting and removing
// duplicates. Directories are resolved once each, not once per file in
// them; a file that is itself a symlink is resolved whole.
class PathResolver {
 public:
  PathResolver() {
    std::error_code ec;
    cwd_ = fs::current_path(ec);
  }
  fs::path Resolve(const Match& m) {
    std::error_code ec;
    const fs::path abs = m.path.is_absolute() ? m.path : cwd_ / m.path;
    if (m.symlink) {
      fs::path whole = fs::weakly_canonical(abs, ec);
      return ec ? abs.lexically_normal() : whole;
    }
    const fs::path parent = abs.parent_path();
    auto it = dirs_.find(parent);
    if (it == dirs_.end()) {
      fs::path canon = fs::weakly_canonical(parent, ec);
      it = dirs_.emplace(parent, ec ? parent.lexically_normal() : canon).first;
    }
    return it->second / abs.filename();
  }

 private:
  fs::path cwd_;
  std::map<fs::path, fs::path> dirs_;
};

std::string StripCompression(const std::string& name) {
  for (const char* ext : {".zst", ".gz"}) {
    size_t n = std::char_traits<char>::length(ext);
    if (name.size() > n && name.compare(name.size() - n, n, ext) == 0) return name.substr(0, name.size() - n);
  }
  return name;
}

bool EndsWith(const std::string& s, const char* suffix) {
  size_t n = std::char_traits<char>::length(suffix);
  return s.size() >= n && s.compare(s.size() - n, n, suffix) == 0;
}

}  // namespace

bool GlobMatch(const std::string& pattern, const std::string& name) {
  return fnmatch(pattern.c_str(), name.c_str(), FNM_PERIOD) == 0;
}

bool FormatFromName(const std::string& path, RecordFormat* out) {
  std::string base = StripCompression(fs::path(path).filename().string());
  for (const RecordFormatRow& row : RecordFormatRows()) {
    for (const char* ext : row.extensions) {
      if (EndsWith(base, ext)) {
        *out = row.format;
        return true;
      }
    }
  }
  return false;
}

Result<ShardList> ExpandShards(const JobSpec& job) {
  std::vector<fs::path> files;
  PathResolver resolver;
  for (size_t i = 0; i < job.files.size(); ++i) {
    const std::string where = job.job_path + ": " + ChildPointer("/inputs/files", i);
    const std::string& pattern = job.files[i];
    fs::path full = fs::path(pattern).is_absolute() ? fs::path(pattern) : fs::path(job.base_dir) / pattern;
    std::vector<Match> matched;
    if (HasWildcard(pattern)) {
      std::string p = full.lexically_normal().string();
      Walk(p[0] == '/' ? fs::path("/") : fs::path("."), Segments(p), 0, &matched);
      if (matched.empty())
        return Status::InvalidArgument(where + ": pattern '" + pattern + "' (" + p + ") matched no files");
    } else {
      std::error_code ec;
      if (!fs::exists(full, ec))
        return Status::InvalidArgument(where + ": input file '" + full.string() + "' does not exist");
      if (!fs::is_regular_file(full, ec))
        return Status::InvalidArgument(where + ": input '" + full.string() + "' is not a regular file");
      matched.push_back({full, fs::is_symlink(full, ec)});
    }
    for (const Match& m : matched) {
      if (access(m.path.c_str(), R_OK) != 0)
        return Status::InvalidArgument(where + ": input file '" + m.path.string() + "' is not readable");
      files.push_back(resolver.Resolve(m));
    }
  }
  // Sorted as paths compare (component by component): as bytes, with '/'
  // turned into '\0' (a byte no path holds) so that it sorts below every
  // other — the same order for normal absolute paths, and a memcmp instead
  // of std::filesystem::path's compare.
  std::vector<std::string> names;
  names.reserve(files.size());
  for (const fs::path& f : files) {
    names.push_back(f.string());
    std::replace(names.back().begin(), names.back().end(), '/', '\0');
  }
  std::sort(names.begin(), names.end());
  names.erase(std::unique(names.begin(), names.end()), names.end());
  for (std::string& n : names) std::replace(n.begin(), n.end(), '\0', '/');

  ShardList list;
  bool have_format = job.format.has_value();
  if (have_format) list.format = *job.format;
  std::string first_named;
  for (const std::string& path : names) {
    if (!job.format) {
      RecordFormat fmt;
      if (!FormatFromName(path, &fmt))
        return Status::InvalidArgument(job.job_path + ": /inputs/format: cannot tell the format of '" + path +
                                       "' from its name; expected \"format\": " + FormatNameList());
      if (have_format && fmt != list.format)
        return Status::InvalidArgument(job.job_path + ": /inputs/files: '" + path + "' is " + FormatName(fmt) +
                                       " but '" + first_named + "' is " + FormatName(list.format) +
                                       "; one job reads one format");
      if (!have_format) first_named = path;
      list.format = fmt;
      have_format = true;
    }
    FileIdentity id;
    if (!IdentifyFile(path, &id).ok())
      return Status::IoError("cannot stat input '" + path + "'");
    Shard s;
    s.path = path;
    s.file_size = id.size;
    s.mtime_ns = id.mtime_ns;
    s.compression = CompressionFromName(path);
    if (job.chunk_bytes > 0 && s.compression == Compression::kNone && RecordFormatRowOf(list.format).chunkable &&
        s.file_size > job.chunk_bytes) {
      for (uint64_t off = 0; off < s.file_size; off += job.chunk_bytes) {
        Shard c = s;
        c.offset = off;
        c.length = std::min<uint64_t>(job.chunk_bytes, s.file_size - off);
        list.shards.push_back(c);
      }
    } else {
      list.shards.push_back(s);
    }
  }
  for (size_t i = 0; i < list.shards.size(); ++i) list.shards[i].index = static_cast<uint32_t>(i);
  return list;
}

}  // namespace fanfold
