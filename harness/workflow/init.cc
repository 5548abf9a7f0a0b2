#include "harness/workflow/init.h"

#include <sys/stat.h>

#include <cstdlib>
#include <cstring>

#include "harness/ledger/entries.h"
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
  GenesisBody genesis;
  genesis.ledger_id = ToHex(id.data(), id.size());
  genesis.row_digest_format = scan.info.row_digest_format;
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, CreateLedger(request.ledger_path, request.actor, genesis));
  std::vector<BlobRef> blobs;
  UNSEEN_ASSIGN_OR_RETURN(BlobRef rows, ledger->PutBlob("row-digests", Bytes(scan.row_digests)));
  blobs.push_back(rows);
  SourceBody source;
  source.source = scan.info;
  if (char* abs = ::realpath(request.data_path.c_str(), nullptr)) {
    source.absolute_path = std::string(abs);
    std::free(abs);
  }
  source.row_digests = rows.digest;
  source.content_digests = rows.digest;  // no id column: the same digests
  if (!scan.content_digests.empty()) {
    UNSEEN_ASSIGN_OR_RETURN(BlobRef content,
                            ledger->PutBlob("content-digests", Bytes(scan.content_digests)));
    blobs.push_back(content);
    source.content_digests = content.digest;
  }
  UNSEEN_ASSIGN_OR_RETURN(Entry entry, AppendEntry(ledger.get(), request.actor, source, blobs));
  UNSEEN_RETURN_IF_ERROR(ledger->Commit());
  InitReport report;
  report.source = std::move(scan.info);
  report.head = entry.hash;
  if (::stat(request.ledger_path.c_str(), &st) == 0) report.ledger_bytes = st.st_size;
  return report;
}

}  // namespace unseen
