#include "common/job/shard_list.h"

#include <unistd.h>

#include <algorithm>
#include <filesystem>
#include <fnmatch.h>
#include <map>
#include <system_error>

#include "common/base/json_location.h"
#include "common/port/files/directory_listing.h"
#include "common/port/files/file_identity.h"

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
  std::string path;  // as listed: relative or absolute, not normalized
  bool symlink = false;
};

// Appends to *out every regular file under dir ("" = the working
// directory) matching segs[i..].
void Walk(const std::string& dir, const std::vector<std::string>& segs, size_t i, std::vector<Match>* out) {
  std::error_code ec;
  const auto join = [&](const std::string& name) {
    return dir.empty() ? name : dir.back() == '/' ? dir + name : dir + "/" + name;
  };
  if (i == segs.size()) {
    if (fs::is_regular_file(dir, ec)) out->push_back({dir, fs::is_symlink(dir, ec)});
    return;
  }
  const std::string& seg = segs[i];
  if (!HasWildcard(seg)) {
    Walk(join(seg), segs, i + 1, out);
    return;
  }
  // The listing's own entry types decide (no stat, unless the file system
  // gives none or the entry is a symlink): a glob over thousands of files
  // should not cost a system call each just to be listed.
  if (seg == "**") Walk(dir, segs, i + 1, out);  // zero directories
  std::vector<DirectoryEntry> entries;
  if (!ListDirectoryEntries(dir, &entries).ok()) return;
  using Type = DirectoryEntry::Type;
  const bool leaf = i + 1 == segs.size();
  for (const DirectoryEntry& e : entries) {
    const bool hidden = e.name[0] == '.';
    if (seg == "**") {
      if (hidden) continue;
      const std::string path = join(e.name);
      if (e.type == Type::kDirectory || ((e.type == Type::kSymlink || e.type == Type::kUnknown) &&
                                         fs::is_directory(path, ec)))
        Walk(path, segs, i, out);
      continue;
    }
    if (hidden && seg[0] != '.') continue;  // hidden files only by explicit pattern
    if (fnmatch(seg.c_str(), e.name.c_str(), FNM_PERIOD) != 0) continue;
    const std::string path = join(e.name);
    if (!leaf) {
      Walk(path, segs, i + 1, out);
    } else if (e.type == Type::kFile) {
      out->push_back({path, false});
    } else if (e.type == Type::kSymlink || e.type == Type::kUnknown) {
      if (fs::is_regular_file(path, ec)) out->push_back({path, fs::is_symlink(path, ec)});
    }
  }
}

// The absolute, symlink-free form of each path, for sorting and removing
// duplicates. Directories are resolved once each, not once per file in
// them (the last one is kept at hand: a glob lists a directory's files
// together); a file that is itself a symlink is resolved whole.
class PathResolver {
 public:
  PathResolver() {
    std::error_code ec;
    cwd_ = fs::current_path(ec).native();
  }
  std::string Resolve(const Match& m) {
    std::error_code ec;
    const std::string abs = !m.path.empty() && m.path[0] == '/' ? m.path : cwd_ + "/" + m.path;
    if (m.symlink) {
      fs::path whole = fs::weakly_canonical(abs, ec);
      return ec ? fs::path(abs).lexically_normal().native() : whole.native();
    }
    const size_t slash = abs.rfind('/');
    const std::string_view parent(abs.data(), slash == 0 ? 1 : slash);
    if (parent != last_parent_) {
      auto it = dirs_.find(std::string(parent));
      if (it == dirs_.end()) {
        const fs::path p(parent);
        fs::path canon = fs::weakly_canonical(p, ec);
        it = dirs_.emplace(std::string(parent), ec ? p.lexically_normal().native() : canon.native()).first;
      }
      last_parent_ = it->first;
      last_canon_ = it->second;
    }
    std::string out = last_canon_;
    if (out.empty() || out.back() != '/') out += '/';
    out.append(abs, slash + 1, std::string::npos);
    return out;
  }

 private:
  std::string cwd_;
  std::map<std::string, std::string> dirs_;
  std::string last_parent_, last_canon_;
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
  std::vector<std::string> files;
  PathResolver resolver;
  for (size_t i = 0; i < job.files.size(); ++i) {
    const std::string where = job.job_path + ": " + ChildPointer("/inputs/files", i);
    const std::string& pattern = job.files[i];
    fs::path full = fs::path(pattern).is_absolute() ? fs::path(pattern) : fs::path(job.base_dir) / pattern;
    std::vector<Match> matched;
    if (HasWildcard(pattern)) {
      std::string p = full.lexically_normal().string();
      Walk(p[0] == '/' ? "/" : "", Segments(p), 0, &matched);
      if (matched.empty())
        return Status::InvalidArgument(where + ": pattern '" + pattern + "' (" + p + ") matched no files");
    } else {
      std::error_code ec;
      if (!fs::exists(full, ec))
        return Status::InvalidArgument(where + ": input file '" + full.string() + "' does not exist");
      if (!fs::is_regular_file(full, ec))
        return Status::InvalidArgument(where + ": input '" + full.string() + "' is not a regular file");
      matched.push_back({full.native(), fs::is_symlink(full, ec)});
    }
    for (const Match& m : matched) {
      if (access(m.path.c_str(), R_OK) != 0)
        return Status::InvalidArgument(where + ": input file '" + m.path + "' is not readable");
      files.push_back(resolver.Resolve(m));
    }
  }
  // Sorted as paths compare (component by component): as bytes, with '/'
  // turned into '\0' (a byte no path holds) so that it sorts below every
  // other — the same order for normal absolute paths, and a memcmp instead
  // of std::filesystem::path's compare.
  std::vector<std::string> names = std::move(files);
  for (std::string& n : names) std::replace(n.begin(), n.end(), '/', '\0');
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
