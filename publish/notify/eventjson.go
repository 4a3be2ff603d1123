package notify

import (
	"bytes"
	"encoding/gob"
	"encoding/json"
)

// eventJSON is the queued form of an eventRecord. encoding/json refuses
// NaN, and evidence uses NaN for "not available at this step", so the
// transition travels gob-encoded (which keeps NaN and ±Inf exactly) inside
// the JSON record. Records queued in the plain form ("t") still decode.
type eventJSON struct {
	Type EventType       `json:"type"`
	Gob  []byte          `json:"tgob,omitempty"`
	T    json.RawMessage `json:"t,omitempty"`
}

// MarshalJSON encodes the record with its transition gob-encoded.
func (r eventRecord) MarshalJSON() ([]byte, error) {
	var b bytes.Buffer
	if err := gob.NewEncoder(&b).Encode(r.T); err != nil {
		return nil, err
	}
	return json.Marshal(eventJSON{Type: r.Type, Gob: b.Bytes()})
}

// UnmarshalJSON decodes either form.
func (r *eventRecord) UnmarshalJSON(data []byte) error {
	var e eventJSON
	if err := json.Unmarshal(data, &e); err != nil {
		return err
	}
	r.Type = e.Type
	if len(e.Gob) > 0 {
		return gob.NewDecoder(bytes.NewReader(e.Gob)).Decode(&r.T)
	}
	if len(e.T) > 0 {
		return json.Unmarshal(e.T, &r.T)
	}
	return nil
}
