#include "harness/workflow/init.h"

#include <sys/stat.h>

#include <cstdlib>
#include <cstring>
#include <nlohmann/json.hpp>

#include "storage/ledger.h"
#include "storage/seal_crypto.h"

namespace unseen {

namespace {

// The digests' bytes back to back, as the blob stores them: a view, not a
// copy (the list is 16 bytes a row, the largest thing init holds).
std::string_view Bytes(const std::vector<RowDigest>& digests) {
  static_assert(sizeof(RowDigest) == 16, "row digests are stored as 16 bytes each");
  return {reinterpret_cast<const char*>(digests.data()), digests.size() * sizeof(RowDigest)};
}

}  // namespace

Result<InitReport> InitLedger(const InitRequest& request) {
  struct stat st;
  if (::stat(request.ledger_path.c_str(), &st) == 0) {
    return Status::AlreadyExists(request.ledger_path +
                                 ": a ledger (or another file) already exists here; refusing to "
                                 "overwrite it");
  }
  UNSEEN_ASSIGN_OR_RETURN(SourceScan scan, ScanSource(request.data_path, request.scan));

  UNSEEN_ASSIGN_OR_RETURN(std::string id, RandomBytes(16));
  nlohmann::json genesis = {{"ledger_id", ToHex(id.data(), id.size())},
                            {"row_digest_format", scan.info.row_digest_format}};
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Create(request.ledger_path, request.actor,
                                                      genesis.dump()));
  std::vector<BlobRef> blobs;
  UNSEEN_ASSIGN_OR_RETURN(BlobRef rows, ledger->PutBlob("row-digests", Bytes(scan.row_digests)));
  blobs.push_back(rows);
  nlohmann::json fields = nlohmann::json::parse(SourceToJson(scan.info));
  if (char* abs = ::realpath(request.data_path.c_str(), nullptr)) {
    fields["file"]["absolute_path"] = std::string(abs);
    std::free(abs);
  }
  fields["row_digests"] = ToHex(rows.digest);
  if (!scan.content_digests.empty()) {
    UNSEEN_ASSIGN_OR_RETURN(BlobRef content,
                            ledger->PutBlob("content-digests", Bytes(scan.content_digests)));
    blobs.push_back(content);
    fields["content_digests"] = ToHex(content.digest);
  } else {
    fields["content_digests"] = ToHex(rows.digest);  // no id column: the same digests
  }
  UNSEEN_ASSIGN_OR_RETURN(Entry entry,
                          ledger->Append("source", request.actor, fields.dump(), blobs));
  UNSEEN_RETURN_IF_ERROR(ledger->Commit());
  InitReport report;
  report.source = std::move(scan.info);
  report.head = entry.hash;
  if (::stat(request.ledger_path.c_str(), &st) == 0) report.ledger_bytes = st.st_size;
  return report;
}

}  // namespace unseen
