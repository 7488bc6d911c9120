// Package eval scores ranked retrieval results against relevance
// judgements, with the measures and the rules of the standard TREC
// evaluation tool, trec_eval, so that its numbers and ours agree to the
// four decimals that tool prints.
//
// It imports nothing of kbc's: a run is any ranked list of document ids,
// whether it came from a bundle (see bundle.Evaluate) or from a file.
//
// # Files
//
// Judgements (qrels) are lines of four fields separated by white space:
//
//	qid  iter  docid  grade
//
// iter is ignored; grade is an integer. A grade of 1 or more is relevant;
// 0 and negative grades are not. A run is lines of at least six fields:
//
//	qid  Q0  docid  rank  score  tag
//
// Q0, rank and tag are ignored, and so is anything after tag: results are
// ranked by score, highest first, ties broken by docid in descending byte
// order (trec_eval's form_res_rels.c, comp_sim_docno). Blank lines and
// lines starting with '#' are skipped in both. A line that does not parse,
// a grade that is not an integer, a score that is not a number, and a docid
// given twice for one query are errors at file:line (trec_eval stops on
// duplicates too).
//
// # Measures
//
// Measures are named as trec_eval names them (see Measures):
//
//	map          average precision: the sum of the precision at the rank of
//	             each relevant document retrieved, divided by the number of
//	             relevant documents judged (m_map.c)
//	recip_rank   1 / rank of the first relevant document, 0 if none (m_recip_rank.c)
//	P_k          relevant in the top k / k, even when fewer than k were retrieved (m_P.c)
//	recall_k     relevant in the top k / relevant judged; 0 when none is (m_recall.c)
//	ndcg_cut_k   discounted cumulative gain of the top k, gain = grade, discount
//	             log2(rank+1), over the same for the ideal order of the judged
//	             grades (m_ndcg_cut.c; Järvelin & Kekäläinen 2002)
//
// The ndcg discount is that of trec_eval 9.0.8 and later (m_ndcg_cut.c
// divides by log2(i+2) for the document at 0-based position i); older
// releases left the first two ranks undiscounted, so their ndcg_cut values
// differ when a relevant document sits at rank 2 or later.
//
// # Which queries count
//
// Evaluate averages over the queries that have both judgements and results,
// as trec_eval does by default. A query in the run with no judgements is
// skipped and listed in Report.Unjudged; a judged query with no results is
// skipped and listed in Report.NotRun, unless Options.Complete is set
// (trec_eval -c), when it scores 0 on every measure and is averaged. A
// judged query whose grades are all 0 or less is scored, 0 on every
// measure, and averaged, as trec_eval does; Report.NoRelevant lists it.
package eval
