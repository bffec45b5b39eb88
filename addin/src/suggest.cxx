#include "suggest.hpp"

#include <algorithm>
#include <cctype>
#include <vector>

namespace weft_addin {

namespace {

// Optimal string alignment distance (Damerau 1964: a swap of neighbours is one edit).
std::size_t edit_distance(const std::string& a, const std::string& b) {
    const std::size_t n = a.size(), m = b.size();
    std::vector<std::vector<std::size_t>> d(n + 1, std::vector<std::size_t>(m + 1, 0));
    for (std::size_t i = 0; i <= n; ++i) d[i][0] = i;
    for (std::size_t j = 0; j <= m; ++j) d[0][j] = j;
    for (std::size_t i = 1; i <= n; ++i)
        for (std::size_t j = 1; j <= m; ++j) {
            const std::size_t cost = a[i - 1] == b[j - 1] ? 0 : 1;
            d[i][j] = std::min({d[i - 1][j] + 1, d[i][j - 1] + 1, d[i - 1][j - 1] + cost});
            if (i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1])
                d[i][j] = std::min(d[i][j], d[i - 2][j - 2] + 1);
        }
    return d[n][m];
}

std::string lower(std::string s) {
    for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    return s;
}

}  // namespace

std::string nearest_word(const std::string& word, const std::string& accepted) {
    const std::string w = lower(word);
    const std::string key = w.substr(0, w.find('='));  // "levl=0.9" is compared as "levl"
    std::string best;
    std::size_t best_d = key.size() <= 4 ? 2 : 3;
    std::string cur;
    auto consider = [&](std::string cand) {
        cand = cand.substr(0, cand.find('='));
        if (cand.empty() || cand == key) return;
        const std::size_t d = edit_distance(key, cand);
        if (d < best_d) {
            best_d = d;
            best = cand;
        }
    };
    for (char c : accepted + ",") {
        if (c == ',' || c == ';' || std::isspace(static_cast<unsigned char>(c))) {
            consider(cur);
            cur.clear();
        } else {
            cur += c;
        }
    }
    if (best.empty()) return best;
    // Keep the value the user typed after "=" (levl=0.9 -> level=0.9).
    const std::size_t eq = w.find('=');
    return eq == std::string::npos ? best : best + w.substr(eq);
}

std::string with_suggestion(const std::string& message) {
    if (message.find("(did you mean") != std::string::npos) return message;  // said already
    const std::size_t open = message.find('"');
    if (open == std::string::npos) return message;
    const std::size_t close = message.find('"', open + 1);
    if (close == std::string::npos) return message;
    const std::string lead = message.substr(0, open);
    if (lead.find("unknown") == std::string::npos && lead.find("not a") == std::string::npos) return message;
    const std::size_t list = message.find("accepted words are", close);
    if (list == std::string::npos) return message;
    std::size_t from = list + std::string("accepted words are").size();
    if (from < message.size() && message[from] == ':') ++from;
    const std::string near = nearest_word(message.substr(open + 1, close - open - 1), message.substr(from));
    if (near.empty()) return message;
    return message.substr(0, close + 1) + " (did you mean \"" + near + "\"?)" + message.substr(close + 1);
}

}  // namespace weft_addin
